"""Sample-preparation knowledge: which regions each mull, solvent, window and the air spoil.

A spectrum is labelled with preparation *tokens* (``"nujol"``, ``"chcl3,caf2"``, ``"atr"``...;
:data:`PREPARATIONS` lists them all). Each token brings

* **regions** (:class:`Region`): wavenumber ranges where the preparation itself absorbs or lets
  no light through, each with a *weight*;
* **own bands**: the preparation's own absorption bands (position, relative intensity, FWHM), for
  simulating a sample in that preparation and for fitting them out of a mixture;
* for windows and crystals, a **cutoff**: no light below it (:func:`opaque_below`).

The room's air (:data:`AIR`: CO2 and water vapour) is always added unless ``air=False``.

How the weights are meant
-------------------------
A weight is the trust a comparison may put in a wavenumber, 0..1. The search multiplies its own
region profile (e.g. an emphasis on the fingerprint region) by :func:`weight_profile` of the union
of both spectra's preparations, so a weight acts on *both* spectra alike: it does not remove a band
from one spectrum, it removes the place from the comparison. Three classes:

* **0, dropped**: opaque (a solvent band in a 0.1 mm cell, a window cutoff, a mineral-oil C-H
  stretch) - no information about the sample there at all.
* **0.1-0.3, low**: the preparation's own strong or medium bands - the sample's band may still
  show, but the preparation's band (or its imperfect subtraction) dominates.
* **0.5-0.8, mild**: weak solvent bands, the falling edge of a window, diamond's noisy lattice
  region, the air's water lines. The air's water-vapour bend region (1900-1300 cm-1) keeps 0.8
  because it holds the carbonyl and aromatic bands a chemist identifies by; CO2 (2400-2280 cm-1)
  gets 0.3 since its residue after the background ratio is often as strong as a real band.

Where regions overlap the profile takes the **minimum**, not the product: two tokens describing
the same absorber (chloroform and deuterochloroform, a KBr pellet's water and the air's) must not
count twice, and the union of the unknown's and the reference's preparations stays idempotent.

The values are in ``reflib/data/preparations.csv`` with the source of every row; most are "from
memory" and assume a 0.1 mm solution cell with the solvent not compensated.

Example
-------
>>> parse_tokens("Chloroform, CaF2")
['chcl3', 'caf2']
>>> opaque_below(["chcl3", "caf2"])
1000.0
>>> import numpy as np
>>> weight_profile(np.array([950.0, 1700.0, 2920.0]), ["nujol", "caf2"], air=False).tolist()
[0.0, 1.0, 0.0]
"""

from __future__ import annotations

import csv
import difflib
import io
import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources
from types import MappingProxyType

import numpy as np

from reflib.errors import ValidationError

KINDS = ("mull", "solution", "pellet", "window", "reflection", "neat", "gas")

#: Default half-width of the linear ramp outside each region's edges, cm-1. About the Gaussian
#: broadening the encoder gives a band, so a band sitting just outside a region is not cut sharply.
DEFAULT_TAPER_CM1 = 10.0

#: Atomic masses (u) for :func:`harmonic_isotope_shift` examples and tests (rounded, from memory).
MASS_H = 1.008
MASS_D = 2.014
MASS_C = 12.000

_TABLE = "preparations.csv"
_COLUMNS = (
    "record",
    "token",
    "kind",
    "lo_cm1",
    "hi_cm1",
    "weight",
    "position_cm1",
    "intensity",
    "fwhm_cm1",
    "text",
    "source",
)


@dataclass(frozen=True)
class Region:
    """A wavenumber range a preparation spoils, and how much the comparison may still trust it.

    ``lo``/``hi`` in cm-1 (``lo`` 0 means "everything below ``hi``"); ``weight`` 0 = dropped,
    0 < weight < 1 down-weighted; ``reason`` a short text for reports; ``token`` the preparation
    (or ``"air"``) it comes from; ``source`` where the numbers come from.
    """

    lo: float
    hi: float
    weight: float
    reason: str
    token: str
    source: str


@dataclass(frozen=True)
class Preparation:
    """One preparation token with its spoiled regions and its own bands.

    ``bands`` are ``(position cm-1, relative intensity 0..1, FWHM cm-1)``; ``kind`` is one of
    :data:`KINDS`; ``cutoff_cm1`` is the "no light below" wavenumber of a window or crystal
    (``None`` when the token has none).
    """

    token: str
    description: str
    regions: tuple[Region, ...]
    bands: tuple[tuple[float, float, float], ...]
    kind: str
    cutoff_cm1: float | None = None


class _TableError(Exception):
    """The packaged table is malformed: a bug in reflib, not a user mistake."""


def _number(row: dict[str, str], column: str, where: str) -> float:
    text = (row.get(column) or "").strip()
    try:
        value = float(text)
    except ValueError:
        raise _TableError(f"{where}: column {column!r} must be a number, got {text!r}") from None
    if not math.isfinite(value):
        raise _TableError(f"{where}: column {column!r} must be finite, got {text!r}")
    return value


def _parse_table(
    text: str, name: str = _TABLE
) -> tuple[dict[str, Preparation], dict[str, str], Preparation]:
    """Parse the preparation table; returns (tokens without air, aliases, air)."""
    lines = [line for line in text.splitlines() if not line.lstrip().startswith("#")]
    reader = csv.DictReader(io.StringIO("\n".join(lines)))
    if tuple(reader.fieldnames or ()) != _COLUMNS:
        raise _TableError(f"{name}: header must be {','.join(_COLUMNS)}, got {reader.fieldnames}")
    heads: dict[str, tuple[str, str]] = {}
    regions: dict[str, list[Region]] = {}
    bands: dict[str, list[tuple[float, float, float]]] = {}
    cutoffs: dict[str, float] = {}
    aliases: dict[str, str] = {}
    for number, row in enumerate(reader, start=2):
        where = f"{name}, data row {number}"
        record = (row["record"] or "").strip()
        token = (row["token"] or "").strip()
        if not token or token != token.lower():
            raise _TableError(f"{where}: token must be non-empty lower case, got {token!r}")
        if record == "prep":
            kind = (row["kind"] or "").strip()
            if kind not in KINDS:
                raise _TableError(f"{where}: kind must be one of {', '.join(KINDS)}, got {kind!r}")
            if token in heads:
                raise _TableError(f"{where}: token {token!r} defined twice")
            heads[token] = (kind, (row["text"] or "").strip())
            continue
        if token not in heads:
            raise _TableError(f"{where}: token {token!r} used before its 'prep' row")
        source = (row["source"] or "").strip()
        if record in ("region", "cutoff", "band") and not source:
            raise _TableError(f"{where}: every {record} row needs a source")
        if record == "alias":
            alias = " ".join((row["text"] or "").lower().split())
            if not alias or alias in aliases or alias in heads:
                raise _TableError(f"{where}: alias {alias!r} empty or already used")
            aliases[alias] = token
        elif record == "region":
            lo = _number(row, "lo_cm1", where)
            hi = _number(row, "hi_cm1", where)
            weight = _number(row, "weight", where)
            if not 0 <= lo < hi:
                raise _TableError(f"{where}: need 0 <= lo_cm1 < hi_cm1, got {lo}, {hi}")
            if not 0 <= weight < 1:
                raise _TableError(f"{where}: weight must be in [0, 1), got {weight}")
            reason = (row["text"] or "").strip()
            regions.setdefault(token, []).append(Region(lo, hi, weight, reason, token, source))
        elif record == "cutoff":
            hi = _number(row, "hi_cm1", where)
            if hi <= 0 or token in cutoffs:
                raise _TableError(f"{where}: one positive cutoff per token, got {hi}")
            cutoffs[token] = hi
            reason = (row["text"] or "").strip()
            regions.setdefault(token, []).append(Region(0.0, hi, 0.0, reason, token, source))
        elif record == "band":
            position = _number(row, "position_cm1", where)
            intensity = _number(row, "intensity", where)
            fwhm = _number(row, "fwhm_cm1", where)
            if position <= 0 or not 0 < intensity <= 1 or fwhm <= 0:
                raise _TableError(
                    f"{where}: band needs position > 0, 0 < intensity <= 1 and FWHM > 0"
                )
            bands.setdefault(token, []).append((position, intensity, fwhm))
        else:
            raise _TableError(f"{where}: unknown record {record!r}")
    for alias in aliases:
        if alias in heads:
            raise _TableError(f"{name}: alias {alias!r} is also a token")
    preps = {
        token: Preparation(
            token=token,
            description=description,
            regions=tuple(sorted(regions.get(token, []), key=lambda r: (r.lo, r.hi))),
            bands=tuple(sorted(bands.get(token, []))),
            kind=kind,
            cutoff_cm1=cutoffs.get(token),
        )
        for token, (kind, description) in heads.items()
    }
    if "air" not in preps:
        raise _TableError(f"{name}: the table must define the 'air' token")
    air = preps.pop("air")
    if any(target == "air" for target in aliases.values()):
        raise _TableError(f"{name}: 'air' takes no aliases")
    return preps, aliases, air


def _load() -> tuple[dict[str, Preparation], dict[str, str], Preparation]:
    text = resources.files("reflib").joinpath("data", _TABLE).read_text(encoding="utf-8")
    return _parse_table(text)


_PREPS, _ALIASES, AIR = _load()

#: Every preparation token (the air excluded: it is always applied, see :data:`AIR`).
PREPARATIONS: Mapping[str, Preparation] = MappingProxyType(_PREPS)
#: Other spellings accepted by :func:`parse_tokens`, mapped to their token.
ALIASES: Mapping[str, str] = MappingProxyType(_ALIASES)
#: The valid tokens, in table order.
TOKENS: tuple[str, ...] = tuple(_PREPS)


def _normalise(word: str) -> str:
    return " ".join(word.lower().replace("_", "-").split())


def _unknown(word: str) -> ValidationError:
    if word == "air":
        return ValidationError(
            "'air' is not a preparation token: the air's CO2 and water-vapour bands are always "
            f"down-weighted; valid tokens: {', '.join(TOKENS)}"
        )
    candidates = list(TOKENS) + list(ALIASES)
    close = difflib.get_close_matches(word, candidates, n=1, cutoff=0.6)
    hint = ""
    if close:
        target = ALIASES.get(close[0], close[0])
        hint = f" (did you mean {target!r}?)"
    return ValidationError(
        f"unknown preparation token {word!r}{hint}; valid tokens: {', '.join(TOKENS)}"
    )


def parse_tokens(text: str | Iterable[str] | None) -> list[str]:
    """Preparation tokens from a comma list or an iterable of words, checked and canonical.

    Words are lower-cased, stripped and mapped through :data:`ALIASES` (``"mull"`` and
    ``"mineral oil"`` -> ``"nujol"``, ``"KBr pellet"`` -> ``"kbr"``, ``"DCM"`` -> ``"ch2cl2"``...);
    commas or semicolons separate tokens, also inside items of an iterable; duplicates are dropped
    keeping the first; ``None`` or an empty string gives ``[]``.

    Raises :class:`~reflib.errors.ValidationError` naming the unknown word, a close match when
    there is one, and the valid tokens.

    >>> parse_tokens("nujol, KBr-window")
    ['nujol', 'kbr-window']
    >>> parse_tokens(["Mineral oil", "nujol"])
    ['nujol']
    """
    if text is None:
        return []
    items = [text] if isinstance(text, str) else text
    out: list[str] = []
    for item in items:
        if not isinstance(item, str):
            raise ValidationError(
                f"preparation tokens must be strings, got {type(item).__name__} {item!r}"
            )
        for part in item.replace(";", ",").split(","):
            word = _normalise(part)
            if not word:
                continue
            token = word if word in PREPARATIONS else ALIASES.get(word)
            if token is None:
                raise _unknown(word)
            if token not in out:
                out.append(token)
    return out


def _preparations(tokens: str | Iterable[str] | None, air: bool) -> list[Preparation]:
    preps = [PREPARATIONS[t] for t in parse_tokens(tokens)]
    if air:
        preps.append(AIR)
    return preps


def regions_for(tokens: str | Iterable[str] | None, *, air: bool = True) -> list[Region]:
    """Every region the preparations (plus the air, unless ``air=False``) spoil, sorted by lo.

    Tokens go through :func:`parse_tokens`, so aliases and comma lists are accepted.

    >>> [(r.lo, r.hi, r.weight) for r in regions_for("chcl3", air=False)]
    [(600.0, 820.0, 0.0), (1195.0, 1240.0, 0.0), (3000.0, 3040.0, 0.2)]
    """
    regions = [r for p in _preparations(tokens, air) for r in p.regions]
    return sorted(regions, key=lambda r: (r.lo, r.hi, r.weight, r.token))


def weight_profile(
    grid_cm1: np.ndarray,
    tokens: str | Iterable[str] | None,
    *,
    air: bool = True,
    taper_cm1: float = DEFAULT_TAPER_CM1,
) -> np.ndarray:
    """Comparison weights in [0, 1] on a wavenumber grid (cm-1, any order) for the preparations.

    Inside a region the weight is the region's weight; outside it rises linearly back to 1 over
    ``taper_cm1`` (so the spoiled range reaches ``taper_cm1`` beyond each edge, and a band just
    outside is faded, not cut). Overlapping regions combine by the **minimum** (see the module
    docstring). A region of weight 0 gives exactly 0 everywhere inside it.

    >>> import numpy as np
    >>> weight_profile(np.array([2395.0, 2405.0, 2415.0]), [], taper_cm1=10).round(2).tolist()
    [0.3, 0.65, 1.0]
    """
    grid = np.asarray(grid_cm1, dtype=float)
    if grid.ndim != 1:
        raise ValidationError(
            f"the wavenumber grid must be one-dimensional, got shape {grid.shape}"
        )
    if not np.all(np.isfinite(grid)):
        raise ValidationError("the wavenumber grid holds a non-finite value (NaN or infinity)")
    taper = float(taper_cm1)
    if not math.isfinite(taper) or taper < 0:
        raise ValidationError(f"taper_cm1 must be a finite number >= 0 cm-1, got {taper_cm1!r}")
    key = tokens if tokens is None or isinstance(tokens, str) else tuple(tokens)
    lo, hi, weight = _region_arrays(key, air)
    if lo.size == 0:
        return np.ones_like(grid)
    outside = np.maximum(np.maximum(lo - grid[None, :], grid[None, :] - hi), 0.0)
    ramp = np.clip(outside / taper, 0.0, 1.0) if taper > 0 else (outside > 0).astype(float)
    return np.minimum(1.0, (weight + (1.0 - weight) * ramp).min(0))


@lru_cache(maxsize=256)
def _region_arrays(
    tokens: str | tuple[str, ...] | None, air: bool
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """lo, hi and weight of :func:`regions_for` as column arrays (one row per region)."""
    regions = regions_for(tokens, air=air)
    cols = [
        np.array([getattr(r, k) for r in regions], dtype=float)[:, None]
        for k in ("lo", "hi", "weight")
    ]
    return cols[0], cols[1], cols[2]


def _weight_class(weight: float) -> int:
    if weight == 0:
        return 0
    return 1 if weight < 0.5 else 2


def merged_regions(
    tokens: str | Iterable[str] | None,
    *,
    air: bool = True,
    within: tuple[float, float] | None = None,
) -> list[tuple[float, float, str]]:
    """Spoiled ranges for reporting: ``[(lo_cm1, hi_cm1, reason), ...]`` sorted by ``lo``.

    Overlapping or touching regions of the same weight class (dropped = 0, low < 0.5,
    mild >= 0.5) merge into one range whose reasons are joined with ``"; "`` (each once); a
    range lying wholly inside a range of a stricter class is left out (it changes nothing).
    ``within=(lo, hi)`` clips the ranges to the wavenumbers actually compared and leaves out
    those entirely outside.

    >>> [(lo, hi) for lo, hi, _ in merged_regions("chcl3,cdcl3", air=False)]
    [(600.0, 820.0), (895.0, 925.0), (1195.0, 1240.0), (2235.0, 2265.0), (3000.0, 3040.0)]
    >>> merged_regions("nujol,hexane", air=False)[1]
    (1368.0, 1390.0, 'mineral oil CH3 bend near 1377 (nujol mull); hexane CH3 bend near 1379')
    """
    if within is not None:
        lo_w, hi_w = (float(v) for v in within)
        if not (math.isfinite(lo_w) and math.isfinite(hi_w) and lo_w < hi_w):
            raise ValidationError(f"within must be (lo, hi) cm-1 with lo < hi, got {within!r}")
    merged: list[tuple[float, float, str]] = []
    by_class: dict[int, list[list]] = {}
    for region in regions_for(tokens, air=air):
        group = by_class.setdefault(_weight_class(region.weight), [])
        if group and region.lo <= group[-1][1]:
            last = group[-1]
            last[1] = max(last[1], region.hi)
            if region.reason not in last[2]:
                last[2].append(region.reason)
        else:
            group.append([region.lo, region.hi, [region.reason]])
    for cls, group in by_class.items():
        stricter = [g for c, gs in by_class.items() if c < cls for g in gs]
        for lo, hi, reasons in group:
            if any(s_lo <= lo and hi <= s_hi for s_lo, s_hi, _ in stricter):
                continue
            if within is not None:
                lo, hi = max(lo, lo_w), min(hi, hi_w)
                if lo >= hi:
                    continue
            merged.append((float(lo), float(hi), "; ".join(reasons)))
    return sorted(merged)


def own_bands(
    tokens: str | Iterable[str] | None, *, air: bool = False
) -> list[tuple[float, float, float, str]]:
    """The preparations' own bands ``(position cm-1, relative intensity, FWHM cm-1, token)``.

    Intensities are relative within each preparation (its strongest band is 1); they describe
    an uncompensated preparation and need scaling to a sample. ``air=True`` adds the air's CO2
    and water-vapour bands (water vapour as envelopes of its many sharp lines). Sorted by
    position.

    >>> [b[0] for b in own_bands("cs2")]
    [1515.0, 2160.0]
    """
    out = [
        (pos, inten, fwhm, p.token)
        for p in _preparations(tokens, air)
        for pos, inten, fwhm in p.bands
    ]
    return sorted(out)


def opaque_below(tokens: str | Iterable[str] | None) -> float | None:
    """The highest "no light below" wavenumber (cm-1) among the tokens' windows, or ``None``.

    >>> opaque_below("nacl"), opaque_below("nujol")
    (650.0, None)
    """
    cutoffs = [p.cutoff_cm1 for p in _preparations(tokens, False) if p.cutoff_cm1 is not None]
    return max(cutoffs) if cutoffs else None


def harmonic_isotope_shift(
    wavenumber_cm1: float, partner_mass: float, light_mass: float, heavy_mass: float
) -> float:
    """Harmonic-oscillator wavenumber (cm-1) of a stretch after swapping in a heavier isotope.

    For a diatomic-like stretch X-A, the wavenumber scales as 1/sqrt(reduced mass), so
    nu_heavy = nu_light * sqrt(mu(X, light) / mu(X, heavy)). Masses in u. Anharmonicity and
    coupling are ignored: observed C-D stretches lie a little above this estimate.

    >>> round(harmonic_isotope_shift(3020.0, MASS_C, MASS_H, MASS_D))
    2218
    """
    masses = (partner_mass, light_mass, heavy_mass)
    if not all(math.isfinite(m) and m > 0 for m in masses) or not math.isfinite(wavenumber_cm1):
        raise ValidationError(f"masses must be positive and finite, got {masses}")
    if wavenumber_cm1 <= 0:
        raise ValidationError(f"the wavenumber must be positive cm-1, got {wavenumber_cm1}")

    def mu(a: float, b: float) -> float:
        return a * b / (a + b)

    return float(
        wavenumber_cm1 * math.sqrt(mu(partner_mass, light_mass) / mu(partner_mass, heavy_mass))
    )


def atr_correction(
    x_cm1: np.ndarray, y: np.ndarray, *, reference_cm1: float = 1000.0
) -> np.ndarray:
    """Approximate ATR correction of an absorbance: ``y * x / reference_cm1``.

    The evanescent wave's penetration depth grows with the wavelength, so ATR bands grow toward
    low wavenumber relative to a transmission spectrum. Dividing by the wavelength relative to
    that at ``reference_cm1`` (i.e. multiplying by x / reference) undoes this to first order;
    it ignores the refractive index's change across strong bands (which also shifts ATR bands a
    few cm-1 low), so treat the result as approximate. Values at ``reference_cm1`` are unchanged.

    >>> atr_correction(np.array([500.0, 1000.0, 2000.0]), np.array([1.0, 1.0, 1.0])).tolist()
    [0.5, 1.0, 2.0]
    """
    x = np.asarray(x_cm1, dtype=float)
    values = np.asarray(y, dtype=float)
    if x.ndim != 1 or values.shape != x.shape:
        raise ValidationError(
            f"x and y must be one-dimensional and of equal length, got {x.shape} and {values.shape}"
        )
    if not (np.all(np.isfinite(x)) and np.all(x > 0)):
        raise ValidationError("wavenumbers for the ATR correction must be positive and finite")
    ref = float(reference_cm1)
    if not math.isfinite(ref) or ref <= 0:
        raise ValidationError(f"reference_cm1 must be a positive wavenumber, got {reference_cm1!r}")
    return values * x / ref
