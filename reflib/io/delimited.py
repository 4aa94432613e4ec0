"""Two-column spectra as plain text: CSV, TSV, semicolon- or whitespace-separated.

Instruments and spreadsheets export a spectrum as rows of ``x, y``. This module reads them into a
:class:`~reflib.spectrum.Spectrum` and writes one back:

* separators: comma, semicolon, tab or runs of whitespace, detected from the rows themselves;
  decimal commas are accepted with semicolon, tab and whitespace separators (``4000,0;0,98``);
* header lines before the first row of numbers are optional; when present they decide the x unit
  (wavenumber in cm-1 or wavelength in micrometres) and the y kind (absorbance, transmittance,
  percent transmittance); lines starting with ``#`` are comments and are skipped everywhere;
* x may run ascending or descending, but strictly (no duplicates, no turning back);
* without a header saying so, reflib does not guess: an x axis entirely below 50 (micrometres?)
  or a y column that could be either absorbance or transmittance is refused with a
  :class:`~reflib.errors.ReadError` that says which option or header would settle it.

Example
-------
>>> rows = "\\n".join(f"{4000 - 100 * i},{0.05 + 0.01 * (i % 3)}" for i in range(20))
>>> s = parse_delimited("wavenumber (cm-1),absorbance\\n" + rows)
>>> s.y_kind, s.range_cm1
('absorbance', (2100.0, 4000.0))
"""

from __future__ import annotations

import csv
import io
import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from reflib.errors import ReadError, ValidationError
from reflib.spectrum import Y_KINDS, Metadata, PeakList, Spectrum, micrometres_to_wavenumber

#: A spectrum with fewer rows than this is refused (a typed peak list belongs in peaktext).
MIN_POINTS = 10

#: An x column entirely below this (cm-1) is not a mid-infrared wavenumber axis; it is most
#: likely wavelength in micrometres (2.5-25 um). Common practice, no source.
MAX_MICROMETRE_X = 50.0

#: Highest wavenumber accepted (cm-1); beyond it the axis is not infrared wavenumber.
MAX_WAVENUMBER = 15000.0

#: Transmittance whose largest value is at most FRACTION_MAX is a 0..1 fraction (real fractions
#: overshoot 1 a little from noise at opaque band edges); from PERCENT_MIN to MAX_PERCENT it is
#: percent; in between it is refused (a percent spectrum peaking below 10 % is unusable).
#: The same split as the JCAMP-DX reader uses. Common practice, no source.
FRACTION_MAX, PERCENT_MIN = 2.0, 10.0

#: A file of fewer rows than this whose x steps differ by more than PEAK_TABLE_SPACING times is
#: a table of picked peaks, not a spectrum (spectrometers sample evenly). Common practice,
#: no source.
PEAK_TABLE_MAX_ROWS, PEAK_TABLE_SPACING = 100, 20.0

#: Highest point of a percent transmittance that the data alone may call percent without a
#: header (a little above 100 from noise and baseline drift). Higher still is percent too when
#: the header or --y-kind says transmittance, or when the data's shape says so (baseline near
#: the top, bands dipping); the quality report then says how far above 100 % it went.
MAX_PERCENT = 110.0

_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")
_NONFINITE = {"nan", "+nan", "-nan", "inf", "+inf", "-inf", "infinity", "+infinity", "-infinity"}
_SEPARATORS = {",": "comma", ";": "semicolon", "\t": "tab", None: "whitespace"}


def _row_pattern(sep: str | None) -> re.Pattern[str]:
    """Whole-line pattern of a plain ``x<sep>y`` row: the fast path for well-formed rows."""
    num = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"
    if sep != ",":
        num = r"[+-]?(?:\d+[.,]?\d*|[.,]\d+)(?:[eE][+-]?\d+)?"
    cell = rf"[\"']?({num})[\"']?"
    gap = r"\s+" if sep is None else rf"[ ]*{re.escape(sep)}[ ]*"
    tail = r"" if sep is None else rf"(?:[ ]*{re.escape(sep)})?"
    return re.compile(rf"{cell}{gap}{cell}{tail}")


_ROW = {sep: _row_pattern(sep) for sep in _SEPARATORS}

_MICROMETRE = re.compile(r"micro-?\s*met(?:er|re)s?|\bmicrons?\b|\bum\b|[µμ]m\b", re.IGNORECASE)
_NANOMETRE = re.compile(r"\bnm\b|nano-?\s*met(?:er|re)", re.IGNORECASE)
_WAVENUMBER = re.compile(
    r"cm\s*(?:\^\s*)?\(?\s*[-−–⁻]\s*[1¹]|1\s*/\s*cm|wave\s*-?\s*numbers?", re.IGNORECASE
)
_WAVELENGTH = re.compile(r"wave\s*-?\s*length", re.IGNORECASE)
_PERCENT_T = re.compile(
    r"%\s*t\b|\bt\s*%|%\s*trans|percent\s*trans|trans\w*\s*[\(\[]?\s*%", re.IGNORECASE
)
_TRANSMITTANCE = re.compile(r"\btrans(?:mittance|mission|m)?\b|^t$", re.IGNORECASE)
_ABSORBANCE = re.compile(r"\babs(?:orbance|orption)?\b|^a$", re.IGNORECASE)
_NOT_A_OR_T = re.compile(r"reflect|kubelka|\bk-?m\b|log\s*\(?\s*1\s*/\s*r|^%?\s*r$", re.IGNORECASE)
# in free header text (not a column label) only whole words count; 'A' or 'T' alone do not
_FREE_PERCENT_T = re.compile(r"%\s*t\b|%\s*trans|percent\s*trans", re.IGNORECASE)
_FREE_TRANSMITTANCE = re.compile(r"\btransmittance\b|\btransmission\b", re.IGNORECASE)
_FREE_ABSORBANCE = re.compile(r"\babsorbance\b", re.IGNORECASE)


@dataclass
class _Rows:
    x: np.ndarray
    y: np.ndarray
    lines: np.ndarray  # 1-based line number of each row
    header: list[str]  # header lines as written (comments left out)


def _field_value(field: str, decimal_comma: bool) -> float | None:
    """The number in one field, NaN for an explicit NaN/inf token, None when not a number."""
    f = field.strip().strip("\"'").strip().replace("\u2212", "-")
    if decimal_comma and "," in f:
        if "." in f or f.count(",") > 1:
            return None
        f = f.replace(",", ".")
    if _NUMBER.fullmatch(f):
        return float(f)
    if f.lower() in _NONFINITE:
        return float("nan")
    return None


def _split(line: str, sep: str | None) -> list[str]:
    fields = line.split() if sep is None else [f.strip() for f in line.split(sep)]
    while fields and not fields[-1].strip("\"' "):
        fields.pop()  # trailing separators leave empty fields; they are not columns
    return fields


def _numeric_fields(line: str, sep: str | None) -> list[float] | None:
    fields = _split(line, sep)
    if not fields:
        return None
    values = [_field_value(f, sep != ",") for f in fields]
    if any(v is None for v in values):
        return None
    return values  # type: ignore[return-value]


def _content_lines(text: str) -> list[tuple[int, str]]:
    out = []
    for number, raw in enumerate(text.splitlines(), start=1):
        line = raw.strip()
        if line and not line.startswith("#"):
            out.append((number, line))
    return out


def _choose_separator(lines: list[tuple[int, str]]) -> str | None:
    """The separator that turns the most lines into rows of two or more numbers."""
    sample = lines[:300]
    best, best_count = None, 0
    for sep in (";", "\t", ",", None):
        count = 0
        for _n, line in sample:
            values = _numeric_fields(line, sep)
            if values is not None and len(values) >= 2:
                count += 1
        if count > best_count:
            best, best_count = sep, count
    return best


def _read_rows(text: str, source: str | None) -> tuple[_Rows, str | None]:
    lines = _content_lines(text)
    if not lines:
        raise ReadError("no data: the text is empty or holds only # comments", path=source)
    sep = _choose_separator(lines)
    header: list[str] = []
    xs: list[float] = []
    ys: list[float] = []
    nums: list[int] = []
    fast = _ROW[sep]
    for number, line in lines:
        m = fast.fullmatch(line)
        if m is not None:
            x, y = float(m.group(1).replace(",", ".")), float(m.group(2).replace(",", "."))
            if math.isfinite(x) and math.isfinite(y):
                xs.append(x)
                ys.append(y)
                nums.append(number)
                continue
        fields = _split(line, sep)
        values = [_field_value(f, sep != ",") for f in fields]
        if xs and any(not f.strip("\"' ") for f in fields):
            raise ReadError(
                f"empty field in a row of {len(fields)} columns: {line[:60]!r}",
                path=source,
                line=number,
            )
        if not fields or any(v is None for v in values):
            if not xs:
                header.append(line)
                continue
            raise ReadError(
                f"expected two numbers ({_SEPARATORS[sep]}-separated) like the rows above, "
                f"got {line[:60]!r}",
                path=source,
                line=number,
            )
        if len(values) == 1:
            raise ReadError(
                f"row has one column ({line[:40]!r}); expected x (wavenumber) and y "
                f"separated by a {_SEPARATORS[sep]}",
                path=source,
                line=number,
            )
        if len(values) > 2:
            labels = _split(header[-1], sep) if header else []
            named = f" (header: {', '.join(labels)})" if len(labels) == len(values) else ""
            raise ReadError(
                f"found {len(values)} columns{named}; reflib reads one x column (wavenumber) "
                "and one y column (absorbance or transmittance): save one spectrum per file "
                "with two columns",
                path=source,
                line=number,
            )
        x, y = values
        if not (np.isfinite(x) and np.isfinite(y)):
            raise ReadError(
                f"not a finite number (NaN or infinity) in {line[:60]!r}",
                path=source,
                line=number,
            )
        xs.append(x)
        ys.append(y)
        nums.append(number)
    if not xs:
        raise ReadError(
            "no rows of two numbers found; expected columns of wavenumber (cm-1) and "
            "absorbance or transmittance, separated by comma, semicolon, tab or spaces",
            path=source,
        )
    rows = _Rows(np.array(xs), np.array(ys), np.array(nums), header)
    if rows.x.size < MIN_POINTS:
        raise ReadError(
            f"only {rows.x.size} data rows (lines {nums[0]}-{nums[-1]}); a spectrum needs at "
            f"least {MIN_POINTS} points (a list of band positions is read as a peak list)",
            path=source,
            line=nums[-1],
        )
    return rows, sep


def _check_monotonic(rows: _Rows, source: str | None) -> None:
    dx = np.diff(rows.x)
    if np.any(dx == 0):
        i = int(np.flatnonzero(dx == 0)[0]) + 1
        raise ReadError(
            f"duplicate x value {rows.x[i]:g} (also on line {rows.lines[i - 1]})",
            path=source,
            line=int(rows.lines[i]),
        )
    direction = np.sign(dx[0])
    bad = np.flatnonzero(np.sign(dx) != direction)
    if bad.size:
        i = int(bad[0]) + 1
        word = "ascending" if direction > 0 else "descending"
        raise ReadError(
            f"x values are not monotonic: {rows.x[i]:g} after {rows.x[i - 1]:g} breaks the "
            f"{word} order of the rows above",
            path=source,
            line=int(rows.lines[i]),
        )
    steps = np.abs(dx)
    if rows.x.size < PEAK_TABLE_MAX_ROWS and steps.max() > PEAK_TABLE_SPACING * steps.min():
        raise ReadError(
            f"the {rows.x.size} rows are very unevenly spaced (x steps from {steps.min():g} to "
            f"{steps.max():g}): this looks like a table of picked peaks, not a spectrum; type "
            "peak lists as text, e.g. '3350 (br), 1715 (s) cm-1'",
            path=source,
        )


def _column_labels(header: list[str], sep: str | None) -> tuple[str, str] | None:
    """(x label, y label) from the last header line when it splits into exactly two labels."""
    if not header:
        return None
    last = header[-1]
    candidates = [_split(last, sep)]
    if sep is None:
        candidates.insert(0, [f for f in re.split(r"\t|\s{2,}", last) if f])
    for fields in candidates:
        fields = [f.strip().strip("\"'").strip() for f in fields]
        if len(fields) == 2 and all(fields):
            return fields[0], fields[1]
    return None


def _x_in_micrometres(
    rows: _Rows, labels: tuple[str, str] | None, header_text: str, source: str | None
) -> bool:
    """Whether x is wavelength in micrometres (True) or wavenumber in cm-1 (False)."""
    small = bool(np.all(rows.x < MAX_MICROMETRE_X))
    x_label = labels[0] if labels else None
    says_um = says_cm1 = False
    if x_label is not None:
        if _NANOMETRE.search(x_label):
            raise ReadError(
                f"x column {x_label!r} is in nanometres; reflib reads wavenumber (cm-1) or "
                "wavelength in micrometres",
                path=source,
            )
        says_um = bool(_MICROMETRE.search(x_label))
        says_cm1 = bool(_WAVENUMBER.search(x_label))
        if _WAVELENGTH.search(x_label) and not says_um and not says_cm1:
            if not small:
                raise ReadError(
                    f"x column {x_label!r} is a wavelength in an unstated unit and its values "
                    f"reach {rows.x.max():g}; write the unit (micrometres) in the header or "
                    "convert to wavenumber (cm-1)",
                    path=source,
                )
            says_um = True  # infrared wavelengths below 50 can only be micrometres
    if not (says_um or says_cm1):
        # free header text (title lines, an unsplittable label line): it may mention a
        # resolution in cm-1 or a path length in um, so it only counts where x agrees
        says_um = bool(_MICROMETRE.search(header_text)) and small
    if says_um and says_cm1:
        raise ReadError(
            f"the header names both micrometres and cm-1 for x ({x_label!r}); "
            "say one unit for the x column",
            path=source,
        )
    if says_um:
        if not small:
            raise ReadError(
                f"the header says x is in micrometres but x reaches {rows.x.max():g}; "
                f"infrared wavelengths are below {MAX_MICROMETRE_X:g} um",
                path=source,
            )
        if np.any(rows.x <= 0):
            raise ReadError("wavelengths must be positive micrometres", path=source)
        return True
    if small:
        raise ReadError(
            f"x runs {rows.x.min():g}..{rows.x.max():g}, all below {MAX_MICROMETRE_X:g}: that is "
            "not a wavenumber axis (cm-1, about 400-4000) and looks like wavelength in "
            "micrometres; add a header naming the unit (e.g. 'wavelength (um),absorbance') "
            "or convert x to cm-1",
            path=source,
        )
    if rows.x.min() <= 0:
        raise ReadError(f"wavenumbers must be positive cm-1, got {rows.x.min():g}", path=source)
    if rows.x.max() > MAX_WAVENUMBER:
        raise ReadError(
            f"x reaches {rows.x.max():g}, beyond {MAX_WAVENUMBER:g} cm-1: not an infrared "
            "wavenumber axis (nanometres?); reflib reads wavenumber (cm-1) or micrometres",
            path=source,
        )
    return False


def _y_kind_from_header(
    labels: tuple[str, str] | None, header_text: str, source: str | None
) -> tuple[str | None, bool, str | None]:
    """(kind, percent, label) the header states; kind None when it says nothing clear."""
    label = labels[1] if labels is not None else None
    if label is not None:
        pct = bool(_PERCENT_T.search(label))
        trans = pct or bool(_TRANSMITTANCE.search(label))
        absb = bool(_ABSORBANCE.search(label))
        if trans and not absb:
            return "transmittance", pct, label
        if absb and not trans:
            return "absorbance", False, label
        if not trans and not absb and _NOT_A_OR_T.search(label):
            raise ReadError(
                f"y column {label!r} is not absorbance or transmittance; reflib reads those two "
                "(convert reflectance or Kubelka-Munk data first)",
                path=source,
            )
    pct = bool(_FREE_PERCENT_T.search(header_text))
    trans = pct or bool(_FREE_TRANSMITTANCE.search(header_text))
    absb = bool(_FREE_ABSORBANCE.search(header_text))
    if trans and not absb:
        return "transmittance", pct, label
    if absb and not trans:
        return "absorbance", False, label
    return None, False, label


def baseline_side(y: np.ndarray) -> tuple[float, float]:
    """(position of the median in the range, tail asymmetry) of an ordinate column.

    The first is ``(median - min) / (max - min)``: near 1 when most points sit at the top,
    near 0 when they sit at the bottom. The second is
    ``((q98 - q50) - (q50 - q2)) / (q98 - q2)`` from the 2nd, 50th and 98th percentiles: near
    +1 when bands rise from the baseline as narrow upward excursions (absorbance), near -1
    when they dip down from it (transmittance), 0 for a symmetric spread. Pure function.

    >>> y = np.r_[np.zeros(90), np.linspace(0.1, 1.0, 10)]
    >>> [round(v, 2) for v in baseline_side(y)]
    [0.0, 1.0]
    """
    y = np.asarray(y, dtype=float)
    lo, hi = float(y.min()), float(y.max())
    q2, q50, q98 = (float(v) for v in np.quantile(y, [0.02, 0.5, 0.98]))
    rel = (q50 - lo) / (hi - lo) if hi > lo else 0.5
    asym = ((q98 - q50) - (q50 - q2)) / (q98 - q2) if q98 > q2 else 0.0
    return rel, asym


def _y_kind_from_data(y: np.ndarray, source: str | None) -> tuple[str, bool]:
    """(kind, percent) judged from the values: which side the baseline is on.

    Most points of an infrared spectrum are baseline, and bands are narrow excursions from it:
    down from near the top for transmittance, up from near the bottom for absorbance (see
    :func:`baseline_side`). Only a clear case is decided. The thresholds were set on the
    published JCAMP-DX infrared files (jcamp 1.3.2 sdist), whose absorbance and transmittance
    spectra they never confuse: strongly absorbing transmittance spectra (median 14 %T,
    highest 49 %T) look like absorbance with a raised baseline and are refused.
    """
    lo, hi, med = float(y.min()), float(y.max()), float(np.median(y))
    rel, asym = baseline_side(y)
    hint = "give --y-kind absorbance or --y-kind transmittance (or a header naming the y column)"
    if rel >= 0.5 and asym <= -0.5:
        if lo >= -0.05 and hi <= FRACTION_MAX and med >= 0.4:
            return "transmittance", False
    if rel >= 0.5 and lo >= -5 and PERCENT_MIN <= hi and med >= 40:
        # absorbance cannot reach 10; with the baseline in the upper half and most points at
        # 40 % or more, only percent transmittance fits, however far above 100 % it drifts
        return "transmittance", True
    if lo >= -0.5 and hi <= 6.0 and (rel <= 0.05 or (rel <= 0.2 and asym >= 0.6)):
        return "absorbance", False
    if hi > 6.0:
        raise ReadError(
            f"y runs {lo:g}..{hi:g} with its median at {med:g}: neither absorbance (about 0-4) "
            "nor a transmittance with its baseline near the top; reflib reads "
            "absorbance or transmittance only; if it is percent transmittance, give "
            "--y-kind transmittance",
            path=source,
        )
    raise ReadError(
        f"cannot tell absorbance from transmittance: y runs {lo:g}..{hi:g} with its median at "
        f"{med:g}, and the bands do not clearly rise from a low baseline (absorbance) or dip "
        f"from a high one (transmittance); {hint}",
        path=source,
    )


def _transmittance_scale(y: np.ndarray, source: str | None) -> bool:
    """Whether transmittance values are percent (by range; common practice, no source)."""
    hi = float(y.max())
    if hi <= FRACTION_MAX:
        return False
    if PERCENT_MIN <= hi:
        return True  # only percent reaches this high; a drift above 100 % is reported, not refused
    raise ReadError(
        f"transmittance values reach {hi:g}: too high for a 0..1 fraction (at most "
        f"{FRACTION_MAX:g}), too low for percent (at least {PERCENT_MIN:g} at the highest "
        "point); check the y column",
        path=source,
    )


def parse_delimited(text: str, *, source: str | None = None, y_kind: str | None = None) -> Spectrum:
    """Read two columns of text (x, y) into a :class:`~reflib.spectrum.Spectrum`.

    Parameters
    ----------
    text:
        The file's content. Rows of ``x<sep>y`` with ``sep`` a comma, semicolon, tab or spaces;
        optional header lines before the first row; ``#`` comment lines anywhere.
    source:
        File name used in error messages.
    y_kind:
        ``'absorbance'`` or ``'transmittance'`` to override the detection. Transmittance given
        this way is still read as percent when its largest value is 10..110.

    Returns
    -------
    Spectrum
        x in cm-1 ascending (micrometres converted by 1e4/um), y as absorbance or as a 0..1
        transmittance fraction (percent divided by 100). ``meta.y_units`` holds the y column's
        header label, ``meta.extra`` how the kind was decided (``y_kind_from``: header, data or
        option), ``x_units`` and ``y_scale`` when converted, and ``header`` (the header lines).

    Raises
    ------
    ReadError
        With the line number for a bad row (one column, text in the middle of the data,
        NaN/inf, duplicate or non-monotonic x); without one for a file-wide ambiguity (x all
        below 50 without a micrometre header, absorbance vs transmittance undecidable).

    Example
    -------
    >>> rows = "\\n".join(f"{4000 - 100 * i};{98 - (i % 4)},5" for i in range(12))
    >>> s = parse_delimited("Wavenumber;%T\\n" + rows)
    >>> s.y_kind, round(float(s.y.max()), 3)
    ('transmittance', 0.985)
    """
    if y_kind is not None and y_kind not in Y_KINDS:
        raise ValidationError(
            f"y_kind must be 'absorbance' or 'transmittance', got {y_kind!r}", path=source
        )
    rows, sep = _read_rows(text, source)
    _check_monotonic(rows, source)
    labels = _column_labels(rows.header, sep)
    header_text = "\n".join(rows.header)
    meta = Metadata()
    if source is not None:
        meta.source_file = Path(source).name
    if rows.header:
        meta.extra["header"] = header_text[:2000]
    meta.extra["separator"] = _SEPARATORS[sep]

    x = rows.x
    if _x_in_micrometres(rows, labels, header_text, source):
        x = micrometres_to_wavenumber(x)
        meta.extra["x_units"] = "micrometres"

    header_kind, header_pct, label = _y_kind_from_header(labels, header_text, source)
    meta.y_units = label
    y = rows.y
    if y_kind is not None:
        kind, origin = y_kind, "option"
        percent = kind == "transmittance" and _transmittance_scale(y, source)
    elif header_kind is not None:
        kind, origin = header_kind, "header"
        if kind == "transmittance":
            percent = _transmittance_scale(y, source)
            if header_pct and not percent:
                raise ReadError(
                    f"the header says percent transmittance ({label or '%T'}) but every value "
                    f"is at most {float(y.max()):g}; give --y-kind transmittance to read them as "
                    "0..1 fractions, or check the column",
                    path=source,
                )
        else:
            percent = False
            if float(y.max()) > 10.0:
                raise ReadError(
                    f"the header says absorbance but y reaches {float(y.max()):g} (absorbance "
                    "above about 4 cannot be measured); is it %T? give --y-kind to say so",
                    path=source,
                )
    else:
        kind, percent = _y_kind_from_data(y, source)
        origin = "data"
    if percent:
        y = y / 100.0
        meta.extra["y_scale"] = "percent"
    if kind == "transmittance" and float(y.max()) > 1.0:
        from reflib.io.jcamp import over_100_note

        meta.extra["transmittance_over_100"] = over_100_note(x, y)
    meta.extra["y_kind_from"] = origin
    try:
        return Spectrum(x, y, kind, meta)
    except ValidationError as exc:  # already checked above; kept as a ReadError for the user
        raise ReadError(exc.message, path=source) from None


def _format(value: float) -> str:
    return repr(float(value))


def write_delimited(spectrum: Spectrum, *, sep: str = ",") -> str:
    """The spectrum as two columns of text that :func:`parse_delimited` reads back exactly.

    The header is ``wavenumber_cm-1<sep><y_kind>``; rows run from high to low wavenumber, the
    order instruments export and chemists read. Numbers are written with a decimal point and
    full float64 precision (shortest round-trip form), whatever the separator.

    Parameters
    ----------
    spectrum:
        Absorbance, or transmittance as a 0..1 fraction (refused when it exceeds 2, since it
        would not read back as a fraction).
    sep:
        ``','`` (default), ``';'``, ``'\\t'`` or ``' '``.

    Example
    -------
    >>> s = Spectrum([1000.0, 2000.0], [0.1, 0.2], "absorbance")
    >>> print(write_delimited(s), end="")
    wavenumber_cm-1,absorbance
    2000.0,0.2
    1000.0,0.1
    """
    if sep not in (",", ";", "\t", " "):
        raise ValidationError(f"separator must be ',', ';', tab or space, got {sep!r}")
    if spectrum.y_kind == "transmittance" and float(spectrum.y.max()) > FRACTION_MAX:
        raise ValidationError(
            f"transmittance reaches {float(spectrum.y.max()):g}; expected a 0..1 fraction "
            "(divide percent by 100 first)"
        )
    lines = [f"wavenumber_cm-1{sep}{spectrum.y_kind}"]
    for xv, yv in zip(spectrum.x[::-1], spectrum.y[::-1], strict=True):
        lines.append(f"{_format(xv)}{sep}{_format(yv)}")
    return "\n".join(lines) + "\n"


#: Columns of :func:`write_peak_table`, in order.
PEAK_TABLE_COLUMNS = ("position_cm-1", "intensity", "width_cm-1", "strength", "broad", "shoulder")


def write_peak_table(peaks: PeakList, *, sep: str = ",") -> str:
    """A peak list as a delimited table, one band per row from high to low wavenumber.

    Columns: :data:`PEAK_TABLE_COLUMNS` (width empty when not known, broad and shoulder 0 or
    1), then ``label``, the author's assignment (empty when none), when any band has one.
    Fields holding the separator or a quote are quoted as CSV does.

    >>> print(write_peak_table(PeakList([1715.0], [1.0], labels=["C=O, ester"])), end="")
    position_cm-1,intensity,width_cm-1,strength,broad,shoulder,label
    1715.00,1.0000,,vs,0,0,"C=O, ester"
    """
    if sep not in (",", ";", "\t"):
        raise ValidationError(f"separator must be ',', ';' or tab, got {sep!r}")
    labelled = peaks.labels is not None and any(peaks.labels)
    out = io.StringIO()
    writer = csv.writer(out, delimiter=sep, lineterminator="\n")
    writer.writerow([*PEAK_TABLE_COLUMNS, *(["label"] if labelled else [])])
    for p in peaks.descending():
        row = [
            f"{p.position:.2f}",
            f"{p.intensity:.4f}",
            "" if p.width != p.width else f"{p.width:.2f}",
            p.strength,
            int(p.broad),
            int(p.shoulder),
        ]
        writer.writerow(row + ([p.label or ""] if labelled else []))
    return out.getvalue()


__all__ = [
    "parse_delimited",
    "write_delimited",
    "write_peak_table",
    "baseline_side",
    "MIN_POINTS",
    "PEAK_TABLE_COLUMNS",
]
