"""The two things reflib reads and stores: a full :class:`Spectrum` and a :class:`PeakList`.

Conventions (used everywhere in reflib):

* the abscissa is wavenumber in cm-1, stored ascending (plots reverse it, as the trade draws IR);
* ``y_kind`` is ``"absorbance"`` (decadic) or ``"transmittance"`` (a 0..1 fraction, not percent);
* peak intensities are relative, 0..1, the strongest band of the list being 1;
* peak widths are full widths at half maximum in cm-1 (NaN when unknown).
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field, replace
from typing import Any, NamedTuple

import numpy as np

from reflib.errors import ValidationError

Y_KINDS = ("absorbance", "transmittance")

#: Strength words, strongest first, with the lowest relative intensity each stands for and the
#: intensity assumed when a typed peak list gives only the word.
#: Thresholds: common practice, no source (notebooks and papers use them loosely).
STRENGTH_WORDS: dict[str, tuple[float, float]] = {
    "vs": (0.75, 1.0),
    "s": (0.45, 0.65),
    "m": (0.2, 0.35),
    "w": (0.07, 0.12),
    "vw": (0.0, 0.04),
}

#: Transmittance below this is treated as this when converting to absorbance: a flat-topped,
#: saturated band becomes absorbance 4 instead of infinity.
MIN_TRANSMITTANCE = 1e-4


def strength_word(relative_intensity: float) -> str:
    """The strength word (vs, s, m, w, vw) for a relative intensity in 0..1.

    >>> strength_word(0.9), strength_word(0.5), strength_word(0.05)
    ('vs', 's', 'vw')
    """
    for word, (lowest, _typical) in STRENGTH_WORDS.items():
        if relative_intensity >= lowest:
            return word
    return "vw"


def _strength_words(relative: np.ndarray) -> list[str]:
    """:func:`strength_word` of each relative intensity (one look-up for the whole array)."""
    words = list(STRENGTH_WORDS)  # strongest first, each with its lowest relative intensity
    lowest = np.array([STRENGTH_WORDS[w][0] for w in words])
    # the first word whose lowest intensity the band reaches; "vw" when it reaches none
    at = (np.asarray(relative)[:, None] < lowest[None, :]).sum(axis=1)
    return [words[min(int(i), len(words) - 1)] for i in at.tolist()]


def word_intensity(word: str) -> float:
    """The relative intensity (0..1) assumed for a strength word given without a number."""
    try:
        return STRENGTH_WORDS[word][1]
    except KeyError:
        raise ValidationError(
            f"unknown strength word {word!r}; expected one of {', '.join(STRENGTH_WORDS)}"
        ) from None


def micrometres_to_wavenumber(um: np.ndarray | float) -> np.ndarray:
    """Convert wavelength in micrometres to wavenumber in cm-1 (1e4 / um).

    >>> float(micrometres_to_wavenumber(5.0))
    2000.0
    """
    um = np.asarray(um, dtype=float)
    if np.any(um <= 0):
        raise ValidationError("wavelengths must be positive micrometres")
    return 1.0e4 / um


def transmittance_to_absorbance(t: np.ndarray) -> np.ndarray:
    """Decadic absorbance A = -log10(T) of a 0..1 transmittance (clipped at 1e-4, so A <= 4)."""
    t = np.asarray(t, dtype=float)
    return -np.log10(np.clip(t, MIN_TRANSMITTANCE, None))


def absorbance_to_transmittance(a: np.ndarray) -> np.ndarray:
    """Transmittance fraction T = 10**(-A) of a decadic absorbance."""
    return np.power(10.0, -np.asarray(a, dtype=float))


@dataclass
class Metadata:
    """Where a spectrum or peak list came from. Every field is optional.

    ``prep`` holds preparation tokens (see :mod:`reflib.chem.prep`) found in the file or given by
    the
    user; ``extra`` keeps any other labelled value a reader found, verbatim.
    """

    title: str | None = None
    origin: str | None = None
    owner: str | None = None
    data_type: str | None = None
    resolution: float | None = None  # cm-1
    state: str | None = None
    sampling_procedure: str | None = None
    y_units: str | None = None  # the unit as the file wrote it
    source_file: str | None = None
    sha256: str | None = None
    prep: list[str] = field(default_factory=list)
    extra: dict[str, str] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready dictionary, leaving out empty fields."""
        out: dict[str, Any] = {}
        for key, value in self.__dict__.items():
            if value in (None, [], {}):
                continue
            out[key] = value
        return out


def _clean_label(value: Any) -> str | None:
    """An author's band label as stored: one line of text without outer blanks, or None."""
    if value is None:
        return None
    text = " ".join(str(value).split())
    return text or None


def _as_1d_float(name: str, values: Any) -> np.ndarray:
    arr = np.asarray(values, dtype=float)
    if arr.ndim != 1:
        raise ValidationError(f"{name} must be one-dimensional, got shape {arr.shape}")
    if not np.all(np.isfinite(arr)):
        bad = int(np.flatnonzero(~np.isfinite(arr))[0])
        raise ValidationError(f"{name} holds a non-finite value (NaN or infinity) at index {bad}")
    return arr


@dataclass
class Spectrum:
    """A full infrared spectrum on a wavenumber axis.

    Parameters
    ----------
    x:
        Wavenumbers in cm-1. Ascending or descending on input; stored ascending.
        Must be strictly monotonic (no duplicate abscissae).
    y:
        Ordinate values, absorbance or transmittance (0..1 fraction) as ``y_kind`` says.
    y_kind:
        ``"absorbance"`` or ``"transmittance"``.
    meta:
        Provenance, see :class:`Metadata`.

    Example
    -------
    >>> s = Spectrum([4000.0, 3000.0, 2000.0], [0.9, 0.5, 0.9], "transmittance")
    >>> s.x.tolist()
    [2000.0, 3000.0, 4000.0]
    >>> round(float(s.to_absorbance().y[1]), 3)
    0.301
    """

    x: np.ndarray
    y: np.ndarray
    y_kind: str = "absorbance"
    meta: Metadata = field(default_factory=Metadata)

    def __post_init__(self) -> None:
        x = _as_1d_float("x", self.x)
        y = _as_1d_float("y", self.y)
        if x.shape != y.shape:
            raise ValidationError(f"x has {x.size} points but y has {y.size}")
        if x.size < 2:
            raise ValidationError(f"a spectrum needs at least 2 points, got {x.size}")
        if self.y_kind not in Y_KINDS:
            raise ValidationError(f"y_kind must be one of {Y_KINDS}, got {self.y_kind!r}")
        dx = np.diff(x)
        if np.all(dx < 0):
            x, y = x[::-1].copy(), y[::-1].copy()
        elif not np.all(dx > 0):
            if np.any(dx == 0):
                i = int(np.flatnonzero(dx == 0)[0])
                raise ValidationError(
                    f"duplicate wavenumber {x[i]:g} cm-1 (points {i} and {i + 1})"
                )
            raise ValidationError(
                "wavenumbers are not monotonic (neither ascending nor descending)"
            )
        if x[0] <= 0:
            raise ValidationError(f"wavenumbers must be positive cm-1, got {x[0]:g}")
        self.x, self.y = x, y

    @property
    def range_cm1(self) -> tuple[float, float]:
        """Lowest and highest wavenumber covered, in cm-1."""
        return float(self.x[0]), float(self.x[-1])

    def to_absorbance(self) -> Spectrum:
        """This spectrum as decadic absorbance (a copy; unchanged if already absorbance)."""
        if self.y_kind == "absorbance":
            return replace(self, y=self.y.copy())
        return replace(self, y=transmittance_to_absorbance(self.y), y_kind="absorbance")

    def to_transmittance(self) -> Spectrum:
        """This spectrum as a 0..1 transmittance fraction (a copy)."""
        if self.y_kind == "transmittance":
            return replace(self, y=self.y.copy())
        return replace(self, y=absorbance_to_transmittance(self.y), y_kind="transmittance")


class Peak(NamedTuple):
    """One band of a :class:`PeakList`."""

    position: float  # cm-1
    intensity: float  # relative, 0..1
    width: float  # FWHM in cm-1, NaN when unknown
    strength: str  # vs, s, m, w, vw
    broad: bool
    shoulder: bool
    label: str | None = None  # the author's assignment, e.g. "C=O", as typed

    def words(self) -> str:
        """The band's description as a chemist writes it, e.g. ``'s, br'``."""
        parts = [self.strength]
        if self.broad:
            parts.append("br")
        if self.shoulder:
            parts.append("sh")
        return ", ".join(parts)


@dataclass
class PeakList:
    """A list of bands: positions (cm-1), relative intensities (0..1), widths (FWHM, cm-1).

    Stored sorted by ascending position. ``strengths`` default to the words of the intensities;
    ``broad`` marks wide bands (O-H, N-H), ``shoulder`` marks shoulders on a stronger band.
    ``labels`` (optional, one entry per band, None for a band without one) keeps the author's
    assignment of a typed list as written, e.g. ``"C=O"`` or ``"arom. C-H"``.

    Example
    -------
    >>> pl = PeakList([1715.0, 3350.0], [1.0, 0.4], broad=[False, True])
    >>> [p.words() for p in pl.descending()]
    ['m, br', 'vs']
    """

    positions: np.ndarray
    intensities: np.ndarray
    widths: np.ndarray | None = None
    strengths: Sequence[str] | None = None
    broad: np.ndarray | None = None
    shoulder: np.ndarray | None = None
    meta: Metadata = field(default_factory=Metadata)
    labels: Sequence[str | None] | None = None

    def __post_init__(self) -> None:
        pos = _as_1d_float("positions", self.positions)
        inten = _as_1d_float("intensities", self.intensities)
        n = pos.size
        if inten.size != n:
            raise ValidationError(f"{n} positions but {inten.size} intensities")
        if (pos <= 0).any():
            raise ValidationError("band positions must be positive cm-1")
        if (inten < 0).any():
            raise ValidationError("relative intensities must not be negative")
        top = inten.max() if n else 0.0
        if top > 0 and top != 1.0:
            inten = inten / top
        widths = (
            np.full(n, np.nan)
            if self.widths is None
            else np.asarray(self.widths, dtype=float).reshape(-1)
        )
        if widths.size != n:
            raise ValidationError(f"{n} positions but {widths.size} widths")
        if (widths <= 0).any():  # NaN (width unknown) compares False
            raise ValidationError("band widths must be positive cm-1")
        strengths = (
            _strength_words(inten) if self.strengths is None else [str(s) for s in self.strengths]
        )
        if len(strengths) != n:
            raise ValidationError(f"{n} positions but {len(strengths)} strength words")
        unknown = set(strengths).difference(STRENGTH_WORDS)
        if unknown:
            s = next(w for w in strengths if w in unknown)
            raise ValidationError(
                f"unknown strength word {s!r}; expected one of {', '.join(STRENGTH_WORDS)}"
            )
        broad = np.zeros(n, bool) if self.broad is None else np.asarray(self.broad, bool)
        shoulder = np.zeros(n, bool) if self.shoulder is None else np.asarray(self.shoulder, bool)
        if broad.size != n or shoulder.size != n:
            raise ValidationError("broad and shoulder flags must have one entry per band")
        labels = None if self.labels is None else [_clean_label(v) for v in self.labels]
        if labels is not None and len(labels) != n:
            raise ValidationError(f"{n} positions but {len(labels)} labels")
        if n < 2 or not (pos[1:] < pos[:-1]).any():  # already ascending: nothing to reorder
            self.positions, self.intensities, self.widths = pos, inten, widths
            self.strengths, self.broad, self.shoulder, self.labels = (
                strengths,
                broad,
                shoulder,
                labels,
            )
            return
        order = np.argsort(pos, kind="stable")
        self.positions = pos[order]
        self.intensities = inten[order]
        self.widths = widths[order]
        self.strengths = [strengths[i] for i in order]
        self.broad = broad[order]
        self.shoulder = shoulder[order]
        self.labels = None if labels is None else [labels[i] for i in order]

    def __len__(self) -> int:
        return int(self.positions.size)

    def __iter__(self) -> Iterator[Peak]:
        # one conversion of each column to Python objects, not one per band and field
        labels = self.labels if self.labels is not None else [None] * len(self)
        return map(
            Peak,
            self.positions.tolist(),
            self.intensities.tolist(),
            self.widths.tolist(),
            self.strengths,
            self.broad.tolist(),
            self.shoulder.tolist(),
            labels,
        )

    def subset(self, idx: np.ndarray | Sequence[int]) -> PeakList:
        """The bands at the given indices (into the ascending order), same metadata."""
        idx = np.asarray(idx, dtype=np.int64)
        return PeakList(
            self.positions[idx],
            self.intensities[idx] if idx.size else np.zeros(0),
            self.widths[idx],
            [self.strengths[i] for i in idx],
            self.broad[idx],
            self.shoulder[idx],
            meta=self.meta,
            labels=None if self.labels is None else [self.labels[i] for i in idx],
        )

    def descending(self) -> list[Peak]:
        """The bands from high to low wavenumber, the order chemists write them in."""
        return list(self)[::-1]

    def to_text(self) -> str:
        """The list as a chemist would type it, e.g. ``'3350 (m, br), 1715 (vs) cm-1'``; an
        author's label follows the words: ``'1715 (vs, C=O)'``."""
        parts = [
            f"{p.position:.0f} ({p.words()}{', ' + p.label if p.label else ''})"
            for p in self.descending()
        ]
        return ", ".join(parts) + " cm-1" if parts else ""

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready form: metadata and one object per band, high to low wavenumber."""
        return {
            "meta": self.meta.to_dict(),
            "peaks": [
                {
                    "position": round(p.position, 2),
                    "intensity": round(p.intensity, 4),
                    "width": None if np.isnan(p.width) else round(p.width, 2),
                    "strength": p.strength,
                    "broad": p.broad,
                    "shoulder": p.shoulder,
                    **({"label": p.label} if p.label is not None else {}),
                }
                for p in self.descending()
            ],
        }
