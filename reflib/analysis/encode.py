"""Peak list -> binned, broadened vector on a fixed wavenumber grid; region profiles.

Every band becomes a Gaussian on the grid whose width sets the position tolerance of the
comparison: a sharp band is spread to ``broadening`` cm-1 FWHM, a broad band (O-H, N-H) keeps its
own width. Intensities are tempered (square root by default) so that one very strong band cannot
dominate the similarity. The grid, bin width, broadening and transform together are an
:class:`Encoding`; a library stores the encoding it was built with and is always searched with it.

Example
-------
>>> from reflib.spectrum import PeakList
>>> enc = Encoding()
>>> v = encode(PeakList([1715.0, 2950.0], [1.0, 0.5]), enc)
>>> v.shape == enc.grid().shape, int(enc.grid()[v.argmax()])
(True, 1716)
"""

from __future__ import annotations

import hashlib
import json
import re
from dataclasses import asdict, dataclass

import numpy as np

from reflib.errors import ValidationError
from reflib.spectrum import PeakList

FWHM_TO_SIGMA = 1.0 / (2.0 * np.sqrt(2.0 * np.log(2.0)))

TRANSFORMS = ("sqrt", "linear", "log")


@dataclass(frozen=True)
class Encoding:
    """Parameters that turn a peak list into a vector. All wavenumbers in cm-1.

    lo, hi:
        Grid limits (cm-1). Bands outside are dropped.
    bin_width:
        Grid spacing (cm-1).
    broadening:
        FWHM (cm-1) of the Gaussian a sharp band is spread as; sets the position tolerance.
    broad_min_width:
        A band marked broad keeps its own FWHM, at least this much (cm-1).
    transform:
        Intensity tempering: ``'sqrt'`` (default), ``'linear'`` or ``'log'`` (log1p of 9*I).
    floor:
        Bands weaker than this, relative to the strongest band outside the spectrum's own
        spoiled regions, are left out (see :func:`comparable_peaks`).

    The defaults were chosen on scripts/bench_accuracy.py (320 invented compounds, 3 040
    queries): broadening 10 / 12 / 16 / 18 / 24 cm-1 gave top-1 86.0 / 89.3 / 91.8 / 91.9 /
    89.8 %; the square root beat linear (74.1 %) and log (85.2 %); 2 cm-1 bins gave the same as
    4 cm-1 (91.8 %); renormalising outside the spoiled regions with a 0.05 floor added about a
    point.
    """

    lo: float = 400.0
    hi: float = 4000.0
    bin_width: float = 4.0
    broadening: float = 16.0
    broad_min_width: float = 60.0
    transform: str = "sqrt"
    floor: float = 0.05
    version: int = 2

    def __post_init__(self) -> None:
        if not (0 < self.lo < self.hi):
            raise ValidationError(f"encoding grid must have 0 < lo < hi, got {self.lo}, {self.hi}")
        if not (0 < self.bin_width <= (self.hi - self.lo) / 10):
            raise ValidationError(f"bin width {self.bin_width} cm-1 is not sensible for the grid")
        if self.broadening <= 0 or self.broad_min_width <= 0:
            raise ValidationError("broadening widths must be positive cm-1")
        if not (0.0 <= self.floor < 1.0):
            raise ValidationError(f"floor must be in [0, 1), got {self.floor}")
        if self.transform not in TRANSFORMS:
            raise ValidationError(f"transform must be one of {TRANSFORMS}, got {self.transform!r}")

    def grid(self) -> np.ndarray:
        """The bin centres in cm-1, ascending."""
        n = int(round((self.hi - self.lo) / self.bin_width)) + 1
        return self.lo + self.bin_width * np.arange(n, dtype=float)

    @property
    def size(self) -> int:
        """Number of bins."""
        return int(round((self.hi - self.lo) / self.bin_width)) + 1

    def to_dict(self) -> dict:
        return asdict(self)

    @classmethod
    def from_dict(cls, d: dict) -> Encoding:
        known = {k: d[k] for k in cls.__dataclass_fields__ if k in d}
        return cls(**known)

    def key(self) -> str:
        """A short digest naming this encoding; vectors made with another key are stale."""
        blob = json.dumps(self.to_dict(), sort_keys=True).encode()
        return hashlib.sha256(blob).hexdigest()[:16]


DEFAULT_ENCODING = Encoding()


def temper(intensities: np.ndarray, transform: str = "sqrt") -> np.ndarray:
    """Apply the intensity transform to relative intensities (0..1)."""
    i = np.clip(np.asarray(intensities, dtype=float), 0.0, None)
    if transform == "sqrt":
        return np.sqrt(i)
    if transform == "log":
        return np.log1p(9.0 * i) / np.log(10.0)
    return i


def band_sigmas(peaks: PeakList, enc: Encoding = DEFAULT_ENCODING) -> np.ndarray:
    """Gaussian sigma (cm-1) each band is spread with under ``enc``."""
    sig = np.full(len(peaks), enc.broadening * FWHM_TO_SIGMA)
    if len(peaks):
        widths = np.where(np.isfinite(peaks.widths), peaks.widths, enc.broad_min_width)
        broad = np.asarray(peaks.broad, bool)
        sig[broad] = np.maximum(widths[broad], enc.broad_min_width) * FWHM_TO_SIGMA
    return sig


def encode(peaks: PeakList, enc: Encoding = DEFAULT_ENCODING) -> np.ndarray:
    """The float32 vector of a peak list on ``enc.grid()``.

    A broad band is spread over its own width with its height scaled by
    sqrt(broadening / width), so that its share of the vector's squared norm stays close to a
    sharp band's of the same intensity (a broad O-H envelope would otherwise swamp the
    comparison).
    """
    grid = enc.grid()
    out = np.zeros(grid.size, dtype=np.float64)
    if len(peaks) == 0:
        return out.astype(np.float32)
    pos = peaks.positions
    keep = (pos >= enc.lo - 3 * enc.broadening) & (pos <= enc.hi + 3 * enc.broadening)
    if not np.any(keep):
        return out.astype(np.float32)
    pos = pos[keep]
    amp = temper(peaks.intensities[keep], enc.transform)
    sig = band_sigmas(peaks, enc)[keep]
    sharp_sigma = enc.broadening * FWHM_TO_SIGMA
    amp = amp * np.sqrt(sharp_sigma / sig)
    # each band only touches bins within 4 sigma of it: one window of indices per band, as
    # wide as that band needs (a broad O-H band's window does not widen the sharp bands'),
    # laid end to end in band order; values outside 4 sigma dropped, summed by bincount
    half = np.ceil(4 * sig / enc.bin_width).astype(np.int64) + 1
    centre = np.rint((pos - enc.lo) / enc.bin_width).astype(np.int64)
    if half.min() == half.max():  # every band as wide: one rectangle of windows
        idx = centre[:, None] + np.arange(-half[0], half[0] + 1)[None, :]
        d = (enc.lo + enc.bin_width * idx - pos[:, None]) / sig[:, None]
        val = amp[:, None] * np.exp(-0.5 * d * d)
    else:
        length = 2 * half + 1
        band = np.repeat(np.arange(pos.size), length)
        first = np.cumsum(length) - length  # where each band's window starts
        idx = centre[band] - half[band] + (np.arange(band.size) - first[band])
        d = (enc.lo + enc.bin_width * idx - pos[band]) / sig[band]
        val = amp[band] * np.exp(-0.5 * d * d)
    ok = (idx >= 0) & (idx < grid.size) & (np.abs(d) <= 4.0)
    out = np.bincount(idx[ok], weights=val[ok], minlength=grid.size)[: grid.size]
    return out.astype(np.float32)


def comparable_peaks(
    peaks: PeakList, tokens: list[str] | tuple[str, ...] = (), enc: Encoding = DEFAULT_ENCODING
) -> PeakList:
    """The peak list as the comparison sees it: intensities relative to the strongest band
    outside the regions the spectrum's own preparation spoils (a solvent or mull-oil band would
    otherwise set the scale), clipped to 1, and bands under ``enc.floor`` left out.

    A saturated band (listed in ``meta.extra['saturated']`` by the picker) keeps its position
    but not its height: its flat top says only that the band is strong, so it counts as
    strong (1, the top of the scale) whatever height its flat top reached. It still sets the
    scale of the others when it is the strongest (a spectrum whose saturation is detected on
    one day and not on another must keep the same relative intensities). Bands flagged
    ``shoulder`` are left out.

    >>> pl = PeakList([1215.0, 1715.0, 1100.0], [1.0, 0.2, 0.005])
    >>> comparable_peaks(pl, ["chcl3"]).positions.tolist()   # 1215 is chloroform's own band
    [1215.0, 1715.0]
    """
    from reflib.chem import prep as prep_mod

    if len(peaks) == 0:
        return peaks
    w = prep_mod.weight_profile(peaks.positions, list(tokens), air=True)
    clear = w >= 0.5
    sat = saturated_mask(peaks)
    scale = float(peaks.intensities[clear].max()) if np.any(clear) else 1.0
    if scale <= 0:
        scale = 1.0
    inten = np.clip(peaks.intensities / scale, 0.0, 1.0)
    inten[sat] = 1.0  # a flat top is at least as strong as any band; its height is unknown
    # A shoulder (a band found in the second derivative, beside a stronger one) is shown to the
    # chemist but not compared: its position and height lean on the neighbour's shape, and on
    # scripts/bench_accuracy.py comparing them cost 0.3-1.5 points of top-1.
    keep = (inten >= enc.floor) & ~np.asarray(peaks.shoulder, bool)
    if np.all(keep) and scale == 1.0 and not sat.any():
        return peaks
    return PeakList(
        peaks.positions[keep],
        inten[keep],
        peaks.widths[keep],
        None,
        peaks.broad[keep],
        peaks.shoulder[keep],
        meta=peaks.meta,
    )


def saturated_mask(peaks: PeakList) -> np.ndarray:
    """True for the bands the picker listed as saturated (``meta.extra['saturated']``, positions
    in cm-1 to 0.1)."""
    text = (peaks.meta.extra or {}).get("saturated") if peaks.meta is not None else None
    out = np.zeros(len(peaks), bool)
    if not text or len(peaks) == 0:
        return out
    try:
        listed = np.array([float(v) for v in str(text).split(",") if v.strip()])
    except ValueError:
        return out
    if listed.size:
        out = np.min(np.abs(peaks.positions[:, None] - listed[None, :]), axis=1) <= 0.051
    return out


def encode_many(peak_lists: list[PeakList], enc: Encoding = DEFAULT_ENCODING) -> np.ndarray:
    """Stack the vectors of several peak lists into an (n, bins) float32 matrix."""
    if not peak_lists:
        return np.zeros((0, enc.size), dtype=np.float32)
    return np.vstack([encode(p, enc) for p in peak_lists])


# --- region profiles: what the user wants stressed ---------------------------------------------

#: Named region profiles (cm-1 ranges and weights). The functional-group region is
#: 4000-1500 cm-1 and the fingerprint region 1500-400 cm-1 (common practice, no source).
PROFILES: dict[str, list[tuple[float, float, float]]] = {
    "even": [],
    "functional": [(1500.0, 4000.0, 2.0)],
    "fingerprint": [(400.0, 1500.0, 2.0)],
}

_RANGE_SPEC = re.compile(r"^\s*(\d+(?:\.\d+)?)\s*-\s*(\d+(?:\.\d+)?)\s*[:=]\s*(\d+(?:\.\d+)?)\s*$")


def parse_profile(spec: str | None) -> list[tuple[float, float, float]]:
    """Parse a region-profile spec into (lo, hi, weight) ranges.

    ``spec`` is a profile name (``even``, ``functional``, ``fingerprint``) or a comma list of
    ``LO-HI:WEIGHT`` ranges in cm-1, e.g. ``"1800-1650:3,1500-400:0.5"``. Unlisted regions keep
    weight 1.

    >>> parse_profile("1800-1650:3")
    [(1650.0, 1800.0, 3.0)]
    """
    if spec is None or not str(spec).strip():
        return []
    s = str(spec).strip().lower()
    if s in PROFILES:
        return list(PROFILES[s])
    out = []
    for part in s.split(","):
        m = _RANGE_SPEC.match(part)
        if not m:
            raise ValidationError(
                f"cannot read weight spec {part.strip()!r}: expected a profile name "
                f"({', '.join(PROFILES)}) or ranges like 1800-1650:3"
            )
        a, b, w = float(m.group(1)), float(m.group(2)), float(m.group(3))
        if a == b:
            raise ValidationError(f"empty range {part.strip()!r} in weight spec")
        if w > 100:
            raise ValidationError(f"weight {w} in {part.strip()!r} is too large (at most 100)")
        out.append((min(a, b), max(a, b), w))
    return out


def region_profile(grid_cm1: np.ndarray, spec: str | None = None) -> np.ndarray:
    """Weights on the grid from a profile spec (see :func:`parse_profile`); later ranges win."""
    grid = np.asarray(grid_cm1, dtype=float)
    w = np.ones_like(grid)
    for lo, hi, weight in parse_profile(spec):
        w[(grid >= lo) & (grid <= hi)] = weight
    return w


def coverage_mask(grid_cm1: np.ndarray, lo: float | None, hi: float | None) -> np.ndarray:
    """1 inside [lo, hi] (cm-1), 0 outside; None means unbounded on that side."""
    grid = np.asarray(grid_cm1, dtype=float)
    m = np.ones_like(grid)
    if lo is not None:
        m[grid < lo] = 0.0
    if hi is not None:
        m[grid > hi] = 0.0
    return m
