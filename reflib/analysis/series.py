"""Leftover starting material across a series of crudes (aliquots of one reaction). No I/O.

The samples are put in order by the time written in each file (a JCAMP-DX ``##LONGDATE``, or
``##DATE`` with ``##TIME``), else by name; each is judged by
:func:`reflib.analysis.leftover.leftover` (through the callable the caller gives, so that the
references may come from a library); the
summary gives the trend of the share (a weighted straight line through share against time or
order) and the first sample from which the starting material stays below the detection limit.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from datetime import datetime
from typing import Any

import numpy as np

from reflib.analysis.leftover import LeftoverResult
from reflib.spectrum import Metadata

#: A trend is called falling or rising when the slope is this many standard errors from zero.
TREND_Z = 2.0

_STAMP = re.compile(
    r"(\d{2,4})[/.-](\d{1,2})[/.-](\d{1,2})(?:[ T]+(\d{1,2}):(\d{2})(?::(\d{2})(?:\.\d+)?)?)?"
)
_CLOCK = re.compile(r"(\d{1,2}):(\d{2})(?::(\d{2}))?")


def _key(label: str) -> str:
    return re.sub(r"[^A-Z]", "", label.upper())


def acquisition_time(meta: Metadata) -> datetime | None:
    """When the spectrum was measured, from the file's labels (``LONGDATE``; else ``DATE``
    with ``TIME``), or None. Two-digit years are read as 19xx/20xx the JCAMP-DX way (< 50 is
    20xx)."""
    extra = {_key(k): str(v) for k, v in meta.extra.items()}
    for label in ("LONGDATE", "ACQUIRED", "ACQUISITIONTIME", "DATETIME"):
        if label in extra:
            t = _parse(extra[label])
            if t is not None:
                return t
    if "DATE" in extra:
        text = extra["DATE"] + (" " + extra["TIME"] if "TIME" in extra else "")
        return _parse(text)
    return None


def _parse(text: str) -> datetime | None:
    m = _STAMP.search(text)
    if m is None:
        return None
    y, mo, d = (int(g) for g in m.groups()[:3])
    if y < 100:
        y += 2000 if y < 50 else 1900
    hh, mm, ss = (int(g) if g else 0 for g in m.groups()[3:])
    if hh == 0 and mm == 0 and m.group(4) is None:
        c = _CLOCK.search(text[m.end() :])
        if c:
            hh, mm, ss = int(c.group(1)), int(c.group(2)), int(c.group(3) or 0)
    try:
        return datetime(y, mo, d, hh, mm, ss)
    except ValueError:
        return None


@dataclass
class SeriesPoint:
    """One crude of the series: its label (file name), measuring time (None when the file has
    none), position in the order (0..) and its leftover result."""

    label: str
    time: datetime | None
    order: int
    result: LeftoverResult

    def to_dict(self) -> dict[str, Any]:
        d = {"file": self.label, "order": self.order}
        d["time"] = None if self.time is None else self.time.isoformat()
        d.update(self.result.to_dict())
        return d


@dataclass
class SeriesResult:
    """What :func:`leftover_series` found; :meth:`to_dicts` is one JSON document per file and
    a summary document last."""

    points: list[SeriesPoint]
    ordered_by: str  # "time" or "name"
    trend: str  # "falling", "rising", "flat" or "too few points"
    slope: float | None  # share per hour (ordered by time) or per sample (by name)
    slope_error: float | None
    below_limit_from: str | None  # first file from which every later one is not detected
    notes: list[str] = field(default_factory=list)

    def x(self) -> np.ndarray:
        """Hours since the first sample (by time) or the order 0, 1, 2... (by name)."""
        if self.ordered_by == "time":
            t0 = self.points[0].time
            return np.array([(p.time - t0).total_seconds() / 3600.0 for p in self.points])
        return np.arange(len(self.points), dtype=float)

    def to_dicts(self) -> list[dict[str, Any]]:
        r4 = lambda v: None if v is None else round(float(v), 5)  # noqa: E731
        summary = {
            "summary": True,
            "files": [p.label for p in self.points],
            "ordered_by": self.ordered_by,
            "x": [round(float(v), 4) for v in self.x()],
            "x_unit": "hours" if self.ordered_by == "time" else "order",
            "shares": [r4(p.result.share) for p in self.points],
            "detected": [bool(p.result.detected) for p in self.points],
            "trend": self.trend,
            "slope": r4(self.slope),
            "slope_error": r4(self.slope_error),
            "below_limit_from": self.below_limit_from,
            "notes": list(self.notes),
        }
        return [p.to_dict() for p in self.points] + [summary]


def order_samples(items: Sequence[tuple[str, Any]]) -> tuple[list[tuple[str, Any]], str]:
    """``(label, data)`` pairs in measuring order: by the time in every file when all have one,
    else by label (natural order: ``crude2`` before ``crude10``)."""
    times = [acquisition_time(d.meta) for _l, d in items]
    if items and all(t is not None for t in times):
        order = sorted(range(len(items)), key=lambda i: (times[i], items[i][0]))
        return [items[i] for i in order], "time"

    def natural(label: str) -> list[Any]:
        return [int(t) if t.isdigit() else t.lower() for t in re.split(r"(\d+)", label)]

    return sorted(items, key=lambda it: natural(it[0])), "name"


def _value_and_error(r: LeftoverResult) -> tuple[float, float]:
    """The share (0 when not detected) and its standard error (from the 95 % interval, or half
    the detection limit when not detected)."""
    if r.detected and r.share is not None and r.share_interval is not None:
        lo, hi = r.share_interval
        return float(r.share), max((hi - lo) / (2 * 1.96), 1e-4)
    return 0.0, max(0.5 * float(r.detection_limit), 1e-4)


def leftover_series(
    items: Sequence[tuple[str, Any]], analyse: Callable[[Any], LeftoverResult]
) -> SeriesResult:
    """Judge every ``(label, data)`` crude with ``analyse`` (e.g. a closure over
    :func:`reflib.analysis.leftover.leftover` with fixed references) in measuring order, and
    summarise: the weighted straight-line trend of the share and where it fell below the
    detection limit."""
    ordered, by = order_samples(items)
    points = [
        SeriesPoint(label, acquisition_time(d.meta) if by == "time" else None, k, analyse(d))
        for k, (label, d) in enumerate(ordered)
    ]
    res = SeriesResult(points, by, "too few points", None, None, None)
    det = [p.result.detected for p in points]
    if det and det[0] is not None:
        k = len(det)
        while k > 0 and not det[k - 1]:
            k -= 1
        if k < len(det) and any(det[:k]):
            res.below_limit_from = points[k].label
        elif not any(det):
            res.notes.append("the starting material is below the detection limit in every sample")
    if len(points) >= 3:
        x = res.x()
        v, e = zip(*(_value_and_error(p.result) for p in points))
        v, w = np.array(v), 1.0 / np.array(e) ** 2
        xm = float(np.sum(w * x) / np.sum(w))
        sxx = float(np.sum(w * (x - xm) ** 2))
        if sxx > 0:
            slope = float(np.sum(w * (x - xm) * v) / sxx)
            # the error from the samples' own intervals: a reaction's share falls off as a curve
            # (first order: exponentially), so the line's misfit is not scatter
            se = float(np.sqrt(1.0 / sxx))
            res.slope, res.slope_error = slope, se
            if slope < -TREND_Z * se:
                res.trend = "falling"
            elif slope > TREND_Z * se:
                res.trend = "rising"
            else:
                res.trend = "flat"
    if by == "name":
        res.notes.append("not every file carries a measuring time: ordered by file name")
    return res
