"""Peak lists typed the way chemists write them in notebooks and papers.

Read into a :class:`~reflib.spectrum.PeakList`::

    3350 (br), 2935 (s), 1715 (vs), 1240 cm-1
    IR (film): 3350 br, 1715 s cm⁻¹
    νmax (KBr)/cm-1 3350, 1715
    3350 (s, br); 3500-3200 (br); 1715.5 very strong

What is understood:

* band positions in cm-1 between 100 and 5000, with or without decimals; a range ``3500-3200``
  is one broad band at the midpoint whose width (FWHM) is the range;
* separators: commas, semicolons, newlines, ``and``; a unit ``cm-1`` (also ``cm^-1``, ``cm⁻¹``,
  ``cm–1``, ``1/cm``) anywhere after a band; Unicode minus and dashes count as hyphens;
* words after a band, bare or in parentheses: strengths ``vs s m w vw`` (or ``very strong``,
  ``strong``, ``medium``, ``weak``, ``very weak``), ``br`` (``b``, ``broad``) and ``sh``
  (``shoulder``);
* a preparation before the first band (``IR (film):``, ``νmax (KBr)/cm-1``, ``ATR:``), turned into
  reflib preparation tokens in ``meta.prep``; the prefix is kept verbatim in
  ``meta.extra['prep_text']`` when it holds words reflib does not know;
* lines starting with ``#`` are comments.

Intensities come from the strength words (:func:`reflib.spectrum.word_intensity`); a band without
one is taken as medium (``m``), and ``meta.extra['intensities']`` says ``'not given'`` (no band
had a word) or ``'partly given'``. A broad band without a range gets a default width: 150 cm-1
above 3000 cm-1 (O-H, N-H stretches), 60 cm-1 below (common practice, no source).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from reflib.errors import ReadError
from reflib.spectrum import Metadata, PeakList, word_intensity

#: Band positions accepted, cm-1 (mid-infrared plus the far end instruments still report).
MIN_POSITION, MAX_POSITION = 100.0, 5000.0

#: A typed range wider than this (cm-1) is taken as a mistake, not one band.
MAX_RANGE_WIDTH = 1000.0

#: Default FWHM (cm-1) of a band marked broad without a range: O-H/N-H stretches above
#: 3000 cm-1 are wider than broad bands below. Common practice, no source.
BROAD_WIDTH_HIGH, BROAD_WIDTH_LOW, BROAD_SPLIT = 150.0, 60.0, 3000.0

_STRENGTHS = {
    "vs": "vs",
    "s": "s",
    "m": "m",
    "w": "w",
    "vw": "vw",
    "strong": "s",
    "medium": "m",
    "med": "m",
    "weak": "w",
}
_VERY = {"strong": "vs", "weak": "vw", "broad": "br"}
_BROAD = {"br", "b", "broad"}
_SHOULDER = {"sh", "shoulder"}
_NO_ASSIGNMENTS = "band assignments such as (C=O) or (O-H) are not read: remove them"
_ALLOWED = (
    "vs, s, m, w, vw, br, sh (or very strong, strong, medium, weak, very weak, broad, shoulder)"
)

#: Preparation words (lower case) -> reflib preparation token (see reflib.chem.prep).
PREP_WORDS: dict[str, str] = {
    "film": "film",
    "neat": "neat",
    "kbr": "kbr",
    "nujol": "nujol",
    "mull": "nujol",
    "fluorocarbon": "fluorocarbon",
    "atr": "atr",
    "chcl3": "chcl3",
    "cdcl3": "cdcl3",
    "ccl4": "ccl4",
    "ch2cl2": "ch2cl2",
    "dcm": "ch2cl2",
    "cs2": "cs2",
    "gas": "gas",
    "vapour": "gas",
    "vapor": "gas",
    "nacl": "nacl",
    "caf2": "caf2",
    "baf2": "baf2",
    "znse": "znse",
}
_WINDOW_WORDS = {"plate", "plates", "window", "windows"}
#: Words of a prefix that carry no preparation (labels and fillers).
_FILLER = {
    "ir", "ftir", "ft-ir", "ν", "v", "max", "νmax", "vmax", "ν_max", "v_max", "umax",
    "spectrum", "spectra", "peaks", "bands", "absorptions", "selected", "data",
    "pellet", "disc", "disk", "plate", "plates", "window", "windows", "cell", "cast",
    "solution", "soln", "thin", "liquid", "oil", "diamond", "in", "on", "as", "and", "of",
}  # fmt: skip

# Characters normalised one-for-one, so that positions in errors match the text as given.
_CHAR_MAP = str.maketrans(
    {
        "\u2212": "-",  # minus sign
        "\u2010": "-",
        "\u2011": "-",
        "\u2012": "-",
        "\u2013": "-",  # en dash
        "\u2014": "-",  # em dash
        "\u207b": "-",  # superscript minus
        "\u00b9": "1",  # superscript one
        "\u00a0": " ",
        "\u2009": " ",
        "\u202f": " ",
        "\uff0c": ",",
    }
)

_TOKEN = re.compile(
    r"""
    (?P<ws>[ \t\r\f\v]+)
  | (?P<nl>\n)
  | (?P<unit>(?i:cm\s*\^?\s*(?:\(\s*-\s*1\s*\)|-\s*1)(?!\d)|1\s*/\s*cm\b))
  | (?P<range>(?P<r1>\d+(?:\.\d+)*)\s*-\s*(?P<r2>\d+(?:\.\d+)*))
  | (?P<number>\d+(?:\.\d+)*)
  | (?P<word>[^\W\d_](?:[\w-]*\w)?\.?)
  | (?P<punct>[(),;:/\[\]])
  | (?P<dot>\.)
  | (?P<other>.)
    """,
    re.VERBOSE,
)


@dataclass
class _Tok:
    kind: str
    text: str
    start: int


@dataclass
class _Band:
    position: float
    width: float
    strength: str | None
    broad: bool
    shoulder: bool
    start: int


def _normalise(text: str) -> str:
    """Same-length text with dashes, minus signs and superscripts made plain; comments blanked."""
    out = []
    for line in text.translate(_CHAR_MAP).split("\n"):
        out.append(" " * len(line) if line.lstrip().startswith("#") else line)
    return "\n".join(out)


def _tokens(text: str) -> list[_Tok]:
    toks = []
    for m in _TOKEN.finditer(text):
        kind = "range" if m.group("range") is not None else m.lastgroup
        if kind == "ws":
            continue
        toks.append(_Tok(str(kind), m.group(0), m.start()))
    return toks


class _Parser:
    def __init__(self, text: str, source: str | None):
        self.original = text
        self.text = _normalise(text)
        self.source = source
        self.toks = _tokens(self.text)
        self.i = 0

    # -- errors -----------------------------------------------------------------------------
    def where(self, start: int) -> tuple[int, int]:
        line = self.text.count("\n", 0, start) + 1
        col = start - (self.text.rfind("\n", 0, start) + 1) + 1
        return line, col

    def error(self, message: str, start: int | None) -> ReadError:
        if start is None:
            return ReadError(message, path=self.source)
        line, col = self.where(start)
        return ReadError(f"{message} (column {col})", path=self.source, line=line)

    # -- pieces -----------------------------------------------------------------------------
    def position(self, text: str, start: int) -> float:
        if text.count(".") > 1:
            raise self.error(f"{text!r} is not a number (more than one decimal point)", start)
        value = float(text)
        if not MIN_POSITION <= value <= MAX_POSITION:
            raise self.error(
                f"band position {text} is outside {MIN_POSITION:.0f}..{MAX_POSITION:.0f} cm-1",
                start,
            )
        return value

    def prefix(self) -> tuple[list[str], str | None]:
        """Preparation tokens and the verbatim prefix (when it holds unknown words)."""
        depth, end = 0, 0
        while end < len(self.toks):
            tok = self.toks[end]
            if tok.kind in ("number", "range") and depth == 0:
                break
            if tok.text in "([":
                depth += 1
            elif tok.text in ")]":
                depth = max(0, depth - 1)
            end += 1
        if end == len(self.toks):
            raise self.error(
                "no band positions found; expected numbers in cm-1 such as "
                "'3350 (br), 1715 (s) cm-1'",
                None,
            )
        prefix_toks, self.i = self.toks[:end], end
        if not prefix_toks:
            return [], None
        words = [t.text.lower().rstrip(".") for t in prefix_toks if t.kind == "word"]
        unknown = any(t.kind in ("number", "range", "other", "dot") for t in prefix_toks)
        prep: list[str] = []
        for w in words:
            if w in PREP_WORDS:
                token = PREP_WORDS[w]
                if w == "mull" and "fluorocarbon" in words:
                    continue
                if token == "kbr" and _WINDOW_WORDS & set(words):
                    token = "kbr-window"
                if token not in prep:
                    prep.append(token)
            elif w not in _FILLER:
                unknown = True
        start, stop = prefix_toks[0].start, self.toks[end].start
        prep_text = self.original[start:stop].strip() if unknown else None
        return prep, prep_text

    def descriptors(self, band_start: int, band_text: str) -> list[_Tok]:
        """Words after a band, bare or in one level of parentheses; the unit is skipped."""
        words: list[_Tok] = []
        while self.i < len(self.toks):
            tok = self.toks[self.i]
            if tok.kind == "word" and tok.text.lower() != "and":
                words.append(tok)
            elif tok.kind == "unit" or tok.text == "/":
                pass
            elif tok.text in "([":
                close = ")" if tok.text == "(" else "]"
                self.i += 1
                while True:
                    if self.i >= len(self.toks):
                        raise self.error(f"'{tok.text}' is never closed", tok.start)
                    inner = self.toks[self.i]
                    if inner.text == close:
                        break
                    if inner.kind == "word":
                        words.append(inner)
                    elif inner.kind in ("number", "range"):
                        raise self.error(
                            f"number {inner.text!r} in parentheses after band {band_text}: "
                            f"reflib reads strengths as words ({_ALLOWED}), not numbers",
                            inner.start,
                        )
                    elif inner.kind in ("unit", "nl") or inner.text in ",;/":
                        pass
                    else:
                        raise self.error(
                            f"unexpected {inner.text!r} in parentheses after band {band_text} "
                            f"({_NO_ASSIGNMENTS})",
                            inner.start,
                        )
                    self.i += 1
            else:
                break
            self.i += 1
        return words

    def band(self, tok: _Tok) -> _Band:
        width, broad = np.nan, False
        if tok.kind == "range":
            m = _TOKEN.match(self.text, tok.start)
            assert m is not None
            a = self.position(m.group("r1"), m.start("r1"))
            b = self.position(m.group("r2"), m.start("r2"))
            if a == b:
                raise self.error(f"range {tok.text} has zero width", tok.start)
            width = abs(a - b)
            if width > MAX_RANGE_WIDTH:
                raise self.error(
                    f"range {tok.text} is {width:g} cm-1 wide; one band spans at most "
                    f"{MAX_RANGE_WIDTH:g} cm-1 (separate positions with commas)",
                    tok.start,
                )
            position, broad = (a + b) / 2.0, True
        else:
            position = self.position(tok.text, tok.start)
        self.i += 1
        strength: str | None = None
        shoulder = False
        words = self.descriptors(tok.start, tok.text)
        k = 0
        while k < len(words):
            w = words[k].text.lower().rstrip(".")
            found: str | None
            if w == "very":
                nxt = words[k + 1].text.lower().rstrip(".") if k + 1 < len(words) else ""
                found = _VERY.get(nxt)
                if found is None:
                    raise self.error(
                        f"'very' after band {tok.text} must be followed by strong, weak or broad",
                        words[k].start,
                    )
                k += 1
            elif w in _STRENGTHS:
                found = _STRENGTHS[w]
            elif w in _BROAD:
                found = "br"
            elif w in _SHOULDER:
                found = "sh"
            else:
                raise self.error(
                    f"unknown word {words[k].text!r} after band {tok.text}; allowed: {_ALLOWED}; "
                    f"{_NO_ASSIGNMENTS}",
                    words[k].start,
                )
            if found == "br":
                broad = True
            elif found == "sh":
                shoulder = True
            elif strength is not None and strength != found:
                raise self.error(
                    f"two strength words ({strength!r} and {found!r}) for band {tok.text}",
                    words[k].start,
                )
            else:
                strength = found
            k += 1
        if broad and not np.isfinite(width):
            width = BROAD_WIDTH_HIGH if position > BROAD_SPLIT else BROAD_WIDTH_LOW
        return _Band(position, width, strength, broad, shoulder, tok.start)

    def bands(self) -> list[_Band]:
        out: list[_Band] = []
        while self.i < len(self.toks):
            tok = self.toks[self.i]
            if tok.kind in ("number", "range"):
                out.append(self.band(tok))
                continue
            if tok.kind in ("nl", "unit") or tok.text in ",;" or tok.text.lower() == "and":
                self.i += 1
                continue
            if tok.kind == "dot":
                nxt = self.toks[self.i + 1] if self.i + 1 < len(self.toks) else None
                if nxt is None or nxt.kind == "nl":  # a full stop ending a sentence
                    self.i += 1
                    continue
            if tok.kind == "word":
                raise self.error(
                    f"word {tok.text!r} without a band position before it; strength words "
                    f"follow the position, e.g. '1715 (s)'; allowed: {_ALLOWED}",
                    tok.start,
                )
            raise self.error(
                f"unexpected {tok.text!r}; expected band positions in cm-1 separated by "
                "commas, e.g. '3350 (br), 1715 (s) cm-1'",
                tok.start,
            )
        return out


def parse_peak_text(text: str, *, source: str | None = None) -> PeakList:
    """Read a typed peak list (positions in cm-1 with strength words) into a PeakList.

    Parameters
    ----------
    text:
        The list as typed, e.g. ``'IR (film): 3350 (br), 2935 (s), 1715 (vs), 1240 cm-1'``.
    source:
        File name used in error messages.

    Returns
    -------
    PeakList
        Positions in cm-1 (ascending), relative intensities from the strength words
        (normalised so the strongest is 1), widths FWHM in cm-1 (NaN unless broad or a range),
        ``meta.prep`` preparation tokens, ``meta.extra`` with ``intensities`` ('not given' or
        'partly given' when words are missing), ``prep_text`` (a prefix with unknown words) and
        ``peak_text`` (the text as typed, up to 2000 characters).

    Raises
    ------
    ReadError
        With the line (and the column in the message) for a malformed or out-of-range number
        (``1715.5.3``, ``17150``), an unknown word, a duplicate position; without a line when
        the text holds no band position at all.

    Example
    -------
    >>> pl = parse_peak_text("IR (film): 3350 (br), 1715 (vs) cm-1")
    >>> pl.meta.prep, pl.to_text()
    (['film'], '3350 (m, br), 1715 (vs) cm-1')
    >>> float(pl.widths[1])
    150.0
    """
    parser = _Parser(text, source)
    prep, prep_text = parser.prefix()
    bands = parser.bands()
    seen: dict[float, int] = {}
    for b in bands:
        if b.position in seen:
            first_line, _ = parser.where(seen[b.position])
            raise parser.error(
                f"band {b.position:g} cm-1 is given twice (first on line {first_line})", b.start
            )
        seen[b.position] = b.start
    meta = Metadata(prep=prep)
    if source is not None:
        meta.source_file = Path(source).name
    given = sum(b.strength is not None for b in bands)
    if given == 0:
        meta.extra["intensities"] = "not given"
    elif given < len(bands):
        meta.extra["intensities"] = "partly given"
    if prep_text:
        meta.extra["prep_text"] = prep_text
    meta.extra["peak_text"] = text.strip()[:2000]
    strengths = [b.strength or "m" for b in bands]
    return PeakList(
        positions=np.array([b.position for b in bands]),
        intensities=np.array([word_intensity(s) for s in strengths]),
        widths=np.array([b.width for b in bands]),
        strengths=strengths,
        broad=np.array([b.broad for b in bands], dtype=bool),
        shoulder=np.array([b.shoulder for b in bands], dtype=bool),
        meta=meta,
    )


_PURE_SPLIT = re.compile(r"[\s,;]+")
_PURE_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")
_STANDALONE_NUMBER = re.compile(r"(?<![\w.])\d")

#: Lines the sniffer looks at (a spectrum shows itself in its first few hundred rows).
SNIFF_LINES = 500


def looks_like_peak_text(text: str) -> bool:
    """Whether ``text`` is a typed peak list rather than delimited columns of a spectrum.

    A spectrum has many rows of two numbers, its y values (absorbance, transmittance) lying
    outside the band-position range 100..5000; a typed list is one or a few lines of band
    positions, often with words. So: ten or more rows of only numbers (two or more each), or
    three or more rows of only numbers holding a value outside 100..5000, mean delimited
    columns; otherwise any text holding a number is taken as a peak list. JCAMP-DX is told
    apart before this is asked.

    >>> looks_like_peak_text("3350, 2935, 1715, 1240 cm-1")
    True
    >>> looks_like_peak_text("\\n".join(f"{4000 - i}.0,0.98" for i in range(20)))
    False
    """
    lines = []
    for raw in text.splitlines():
        line = raw.strip()
        if line and not line.startswith("#"):
            lines.append(line)
        if len(lines) >= SNIFF_LINES:
            break
    if not lines:
        return False
    multi = outside = 0
    for line in lines:
        parts = [p for p in _PURE_SPLIT.split(line.replace('"', " ").replace("'", " ")) if p]
        if not parts or not all(_PURE_NUMBER.fullmatch(p) for p in parts):
            continue
        values = [float(p) for p in parts]
        if len(values) >= 2:
            multi += 1
        if any(not MIN_POSITION <= abs(v) <= MAX_POSITION for v in values):
            outside += 1
    if multi >= 10 or outside >= 3:
        return False
    return bool(_STANDALONE_NUMBER.search("\n".join(lines)))


__all__ = ["parse_peak_text", "looks_like_peak_text", "PREP_WORDS"]
