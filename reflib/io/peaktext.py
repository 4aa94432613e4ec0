"""Peak lists typed the way chemists write them in notebooks, papers and experimental sections.

Read into a :class:`~reflib.spectrum.PeakList`::

    3350 (br), 2935 (s), 1715 (vs), 1240 cm-1
    IR (film): 3350 br, 1715 s cm⁻¹
    νmax (KBr)/cm-1 3350, 1715
    3350 (s, br); 3500-3200 (br); 1715.5 very strong
    IR (KBr): ν = 3320 (s, NH), 1680 (vs, C=O) cm-1
    Rf 0.3; IR (film) 2935, 1715 (s, C=O) cm-1; 1H NMR (400 MHz, CDCl3) δ 7.26 (s, 1H)

What is understood:

* band positions in cm-1 between 100 and 5000, with or without decimals; a range ``3500-3200``
  is one broad band at the midpoint whose width (FWHM) is the range;
* separators: commas, semicolons, newlines, ``and``; a unit ``cm-1`` (also ``cm^-1``, ``cm⁻¹``,
  ``cm–1``, ``1/cm``) anywhere after a band; Unicode minus and dashes count as hyphens;
* words after a band, bare or in parentheses: strengths ``vs s m w vw`` (or ``very strong``,
  ``strong``, ``medium``, ``weak``, ``very weak``), shapes ``br`` (``b``, ``broad``), ``sh``
  (``shoulder``) and ``sharp``;
* in a band's parentheses, in any order with those words, the author's assignment: a bond or
  group formula (``C=O``, ``O-H``, ``NH2``, ``C≡N``, ``C-O-C``, ``CO2Et``, ``ν(C=O)``) with
  group names and qualifiers (``arom. C-H``, ``amide I``, ``ester C=O str``). It is kept, as
  typed, in ``PeakList.labels``. A word that is none of these is refused;
* a preparation before the first band (``IR (film):``, ``νmax (KBr)/cm-1``, ``ATR:``), turned into
  reflib preparation tokens in ``meta.prep``; the prefix is kept verbatim in
  ``meta.extra['prep_text']`` when it holds words reflib does not know;
* lines starting with ``#`` are comments.

**A characterisation line.** When the text names a technique (``IR``, ``FTIR``, ``FT-IR``,
``ATR-IR``, ``νmax``, ``ν̃``, ``v max``; or NMR, MS, HRMS, m/z, UV, mp, Rf, [α]D, elemental
analysis, HPLC/TLC), only the IR segments are read. An IR segment starts at its technique name,
carries the preparation in its parentheses, and ends at the unit ``cm-1`` (when no band follows
it), at the ``;`` or ``.`` before other text, or where the next technique starts.
``meta.extra['ir_segment']`` holds the segment as typed and ``meta.extra['ir_segment_at']``
where it is (``'line 1, columns 10-41'``). Two IR segments (two preparations) are two peak
lists (:func:`parse_peak_texts`). A number that could be a band but lies outside every IR
segment and every other technique's part (before the first technique name, or after the IR
part's unit) is refused with its line and column: reflib does not guess which list it belongs to.
Text naming other techniques but no IR is refused, and so is a table of bare numbers (two or
more lines of several numbers, no unit, no words).

Intensities come from the strength words (:func:`reflib.spectrum.word_intensity`); a band without
one is taken as medium (``m``), and ``meta.extra['intensities']`` says ``'not given'`` (no band
had a word) or ``'partly given'``. A broad band without a range gets a default width: 150 cm-1
above 3000 cm-1 (O-H, N-H stretches), 60 cm-1 below (common practice, no source).

:func:`compare_labels` sets the author's labels beside reflib's own reading of each band.
"""

from __future__ import annotations

import bisect
import functools
import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
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

#: Longest author's label kept for one band (characters).
MAX_LABEL_CHARS = 80

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
_SHARP = {"sharp"}
_ALLOWED = (
    "vs, s, m, w, vw, br, sh (or very strong, strong, medium, weak, very weak, broad, "
    "shoulder, sharp)"
)
_ASSIGNMENT_HINT = "or an assignment in the parentheses such as C=O, O-H, NH2, C≡N or arom. C-H"

# -- assignments (common practice of experimental sections, no source) ----------------------

#: Words naming a group; one of these, or a formula, makes a parenthesis an assignment.
_GROUP_WORDS = {
    "carbonyl", "hydroxyl", "hydroxy", "ester", "ketone", "aldehyde", "amide", "amine",
    "ammonium", "acid", "carboxylic", "carboxylate", "lactone", "lactam", "anhydride", "imide",
    "imine", "oxime", "nitrile", "isonitrile", "nitro", "nitrate", "azide", "diazo",
    "isocyanate", "isothiocyanate", "carbamate", "carbonate", "urea", "urethane", "ether",
    "epoxide", "alkyne", "alkene", "olefin", "olefinic", "vinyl", "aromatic", "arom", "arene",
    "aryl", "alkyl", "aliphatic", "aliph", "methyl", "methylene", "phenyl", "phenol", "alcohol",
    "thiol", "sulfone", "sulfoxide", "sulfonamide", "sulfonate", "sulfonyl", "phosphonate",
    "phosphate", "silyl", "siloxane", "enone", "enol", "ketene", "allene", "carbodiimide",
    "water", "amino", "cyano", "acetyl", "acyl", "benzoyl", "lactol", "acetal", "ketal",
}  # fmt: skip
#: Words that qualify an assignment but name no group on their own.
_QUALIFIERS = {
    "str", "st", "stretch", "stretching", "vib", "vibration", "bend", "bending", "def",
    "deform", "deformation", "sym", "symm", "asym", "as", "symmetric", "asymmetric", "antisym",
    "in-plane", "out-of-plane", "oop", "ip", "wag", "wagging", "rock", "rocking", "scissor",
    "scissoring", "twist", "free", "bonded", "h-bonded", "assoc", "associated", "intramolecular",
    "intermolecular", "ring", "overtone", "overtones", "combination", "band", "conj",
    "conjugated", "unconj", "sat", "saturated", "sp", "sp2", "sp3", "i", "ii", "iii",
    "mono", "monosubst", "disubst", "ortho", "para", "meta", "subst", "and", "or", "of",
    "umbrella", "breathing", "unsat", "unsaturated", "monomer", "dimer",
    "ν", "δ", "γ", "ρ", "ω", "τ", "α", "β", "νas", "νs", "δas", "δs", "+",
}  # fmt: skip
#: Element symbols and the abbreviations of groups written in formulae, longest first.
_SYMBOLS = sorted(
    """Fmoc TBDMS TBS TMS TIPS TES Boc Cbz Piv iPr tBu nBu sBu iBu Tf Ts Ms Ns Ac Bz Bn Ph Ar
    Me Et Pr Bu Cl Br Si Se Sn Li Na Mg Al Zn Cu Fe Pd Pt Ni Co Mn Cr Ti Ru Rh Ir Os Ag Au Hg Ge
    As Te Ga Ca Cs Zr Mo K B C N O F P S I H D R X""".split(),
    key=len,
    reverse=True,
)
_ABBREVIATIONS = {s for s in _SYMBOLS if len(s) >= 2 and not s[1:].islower()} | {
    "Ph", "Ar", "Me", "Et", "Pr", "Bu", "Ac", "Bz", "Bn", "Ts", "Ms", "Ns", "Tf",
}  # fmt: skip
_SYMBOL = re.compile("|".join(_SYMBOLS))
_FORMULA = re.compile(
    rf"(?:{_SYMBOL.pattern}|\d|[-=≡#()\[\]+·'])+"
)  # \d, not \d+: no nested repeat
_BOND_CHARS = set("-=≡#")
_GREEK_PREFIX = re.compile(r"[νδγρωτβv](?:as|sym|asym|s)?(?=[A-Z(\[])")
_CHUNK = re.compile(r"[^\s/]+")
_UNIT_CHUNK = re.compile(r"(?i)cm\s*\^?\s*(?:\(\s*-\s*1\s*\)|-\s*1)|1\s*/\s*cm")

# -- techniques of a characterisation line ----------------------------------------------------

_IR_MARKERS = re.compile(
    r"(?<![\w-])(?:ATR-FT-?IR|ATR-IR|FT-?IR|IR|[νv]\u0303(?:\s?max)?|ṽ(?:\s?max)?|[νv]\s?max|umax)"
    r"(?![\w-])"
)
_OTHER_MARKERS: list[tuple[str, re.Pattern[str]]] = [
    (
        "NMR",
        re.compile(
            r"(?<![\w-])(?:\d{1,3}\s?[A-Z][a-z]?(?:\s?\{\s?\d{1,3}\s?[A-Z][a-z]?\s?\})?[-\s]?)?"
            r"NMR(?![\w])"
        ),
    ),
    ("NMR", re.compile(r"(?<![\w])δ[HCFPN]?\s?(?:=\s?)?(?=\d)")),
    (
        "MS",
        re.compile(
            r"(?<![\w-])(?:(?:HR|LR)[-\s]?)?(?:(?:ESI|EI|CI|FAB|APCI|MALDI|GC|LC|DART|FD)"
            r"(?:[-/]?TOF)?[-\s]?)?MS(?![\w-])"
        ),
    ),
    ("MS", re.compile(r"(?<![\w])m/z(?![\w])")),
    ("MS", re.compile(r"\[\s?M\s?[-+·]")),
    ("UV", re.compile(r"(?<![\w-])UV(?:[-/ ]?[Vv][Ii][Ss])?(?![\w])")),
    ("UV", re.compile(r"(?<![\w])λ\s?max(?![\w])")),
    ("mp", re.compile(r"(?<![\w.])(?:[MmBb]\.\s?[Pp]\.|[MmBb][Pp]|MP)(?![\w])")),
    ("Rf", re.compile(r"(?<![\w])R\s?[Ff](?![\w])")),
    ("[α]D", re.compile(r"\[\s?α\s?\]")),
    (
        "elemental analysis",
        re.compile(
            r"(?<![\w])(?:Anal|[Ee]lemental\s+[Aa]nalysis|[Ee]lem\.\s?[Aa]nal|[Cc]alc(?:d|ulated)"
            r"|Found)(?![\w])"
        ),
    ),
    ("chromatography", re.compile(r"(?<![\w-])(?:HPLC|TLC|GC)(?![\w-])")),
]
#: For each pattern of :data:`_OTHER_MARKERS`, texts of which every match holds at least one:
#: a text holding none is not searched (most peak lists name no other technique).
_MARKER_NEEDS: list[tuple[str, ...]] = [
    ("NMR",),
    ("δ",),
    ("MS",),
    ("m/z",),
    ("[",),
    ("UV",),
    ("λ",),
    ("P", "p"),
    ("R",),
    ("α",),
    ("nal", "alc", "Found"),
    ("C",),
]
#: Words after a number that make it a quantity, not a band (in text outside the IR part).
_QUANTITY_WORDS = {
    "mg", "g", "kg", "µg", "μg", "mmol", "mol", "µmol", "μmol", "ml", "l", "µl", "μl", "%",
    "°c", "°", "k", "h", "min", "mhz", "hz", "nm", "ppm", "mm", "µm", "μm", "equiv", "eq",
    "da", "bar", "mbar", "torr", "psi", "rpm", "m", "c",
}  # fmt: skip

#: Preparation words (lower case) -> reflib preparation token (see reflib.chem.prep).
PREP_WORDS: dict[str, str] = {
    "film": "film",
    "neat": "neat",
    "kbr": "kbr",
    "nujol": "nujol",
    "mull": "nujol",
    "fluorocarbon": "fluorocarbon",
    "atr": "atr",
    "atr-ir": "atr",
    "atr-ftir": "atr",
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
    "ir", "ftir", "ft-ir", "ν", "v", "ṽ", "max", "νmax", "vmax", "ν_max",
    "v_max", "umax", "spectrum", "spectra", "peaks", "bands", "absorptions", "selected", "data",
    "pellet", "disc", "disk", "plate", "plates", "window", "windows", "cell", "cast",
    "solution", "soln", "thin", "liquid", "oil", "diamond", "in", "on", "as", "and", "of",
}  # fmt: skip
#: Characters of a prefix that carry nothing (``ν =``, ``ν̃``, ``ṽ ~``).
_PREFIX_SIGNS = {"=", "~", "\u0303", ">"}

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
        "\u207a": "+",  # superscript plus
        "\u00b9": "1",  # superscript one
        "\u00b2": "2",
        "\u00b3": "3",
        **{chr(0x2070 + d): str(d) for d in (0, 4, 5, 6, 7, 8, 9)},  # superscript digits
        **{chr(0x2080 + d): str(d) for d in range(10)},  # subscript digits (NH₂)
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


class _Tok:
    __slots__ = ("kind", "text", "start")

    def __init__(self, kind: str, text: str, start: int):
        self.kind, self.text, self.start = kind, text, start

    def __repr__(self) -> str:
        return f"_Tok({self.kind!r}, {self.text!r}, {self.start})"

    @property
    def end(self) -> int:
        return self.start + len(self.text)


@dataclass
class _Band:
    position: float
    width: float
    strength: str | None
    broad: bool
    shoulder: bool
    start: int
    label: str | None = None


@dataclass
class _Marker:
    kind: str  # "IR" or the name of another technique
    start: int
    end: int
    text: str


@dataclass
class _Segment:
    prep: list[str]
    prep_text: str | None
    bands: list[_Band]
    start: int  # character offsets into the text
    end: int
    marker: str | None = None  # the technique name as typed, None for a plain list
    notes: list[str] = field(default_factory=list)


def _normalise(text: str) -> str:
    """Same-length text with dashes, minus signs and superscripts made plain; comments blanked."""
    out = []
    for line in text.translate(_CHAR_MAP).split("\n"):
        out.append(" " * len(line) if line.lstrip().startswith("#") else line)
    return "\n".join(out)


def _tokens(text: str) -> list[_Tok]:
    # The outermost group that matched names the token ('range', not its inner 'r1'/'r2').
    return [
        _Tok(m.lastgroup, m.group(), m.start())  # type: ignore[arg-type]
        for m in _TOKEN.finditer(text)
        if m.lastgroup != "ws"
    ]


def _markers(text: str) -> list[_Marker]:
    """Technique names in ``text``, in order; a name inside an earlier one's match is dropped."""
    found = [_Marker("IR", m.start(), m.end(), m.group(0)) for m in _IR_MARKERS.finditer(text)]
    for (name, pattern), needs in zip(_OTHER_MARKERS, _MARKER_NEEDS):
        if not any(n in text for n in needs):
            continue
        found += [_Marker(name, m.start(), m.end(), m.group(0)) for m in pattern.finditer(text)]
    found.sort(key=lambda m: (m.start, -m.end))
    out: list[_Marker] = []
    for m in found:
        if out and m.start < out[-1].end:
            continue
        out.append(m)
    return out


# -- assignment words ---------------------------------------------------------------------------


def _formula_atoms(text: str) -> tuple[int, bool, bool] | None:
    """(atoms, has a group abbreviation, has a bond sign) of a formula-like word, else None."""
    if not text or not _FORMULA.fullmatch(text):
        return None
    atoms, abbrev, pos = 0, False, 0
    for m in re.finditer(rf"({_SYMBOL.pattern})(\d*)|\d+|.", text):
        if m.group(1):
            atoms += int(m.group(2) or 1)
            abbrev = abbrev or m.group(1) in _ABBREVIATIONS
        pos = m.end()
    if pos != len(text) or atoms == 0:
        return None
    return atoms, abbrev, bool(_BOND_CHARS & set(text))


@functools.lru_cache(maxsize=4096)
def _chunk_kind(chunk: str) -> str:
    """``'descriptor'``, ``'number'``, ``'unit'``, ``'group'`` (a formula or group name),
    ``'qualifier'`` or ``'unknown'`` for one word of a band's parentheses."""
    low = chunk.lower().rstrip(".:")
    if chunk == "SH":  # thiol S-H, not a shoulder
        return "group"
    if low in _STRENGTHS or low in _BROAD or low in _SHOULDER or low in _SHARP or low == "very":
        return "descriptor"
    if re.fullmatch(r"\d+(?:\.\d+)*", chunk):
        return "number"
    if _UNIT_CHUNK.fullmatch(chunk):
        return "unit"
    low = re.sub(r"^[αβγδω](?:,[αβγδω])*-(?=[a-z])", "", low)  # 'β-lactam', 'α,β-unsat.'
    if low.rstrip(".") in _GROUP_WORDS:
        return "group"
    if low in _QUALIFIERS:
        return "qualifier"
    body = chunk.rstrip(".")
    m = _GREEK_PREFIX.match(body)
    if m:
        body = body[m.end() :]
    while len(body) >= 2 and body[0] in "([" and body[-1] in ")]":
        body = body[1:-1]
    atoms = _formula_atoms(body)
    if atoms is not None and (atoms[0] >= 2 or atoms[1] or atoms[2]):
        return "group"
    return "unknown"


def _split_items(inner: str, offset: int) -> list[tuple[str, int]]:
    """The comma- or semicolon-separated items of a parenthesis (not splitting nested ones)."""
    items, depth, begin = [], 0, 0
    for k, ch in enumerate(inner):
        if ch in "([":
            depth += 1
        elif ch in ")]":
            depth = max(0, depth - 1)
        elif ch in ",;" and depth == 0:
            items.append((inner[begin:k], offset + begin))
            begin = k + 1
    items.append((inner[begin:], offset + begin))
    return items


_BRACKET = re.compile(r"[()\[\]]")


@functools.lru_cache(maxsize=4096)
def _read_parenthesis(
    inner: str, original: str
) -> tuple[tuple[tuple[str, int], ...], tuple[str, ...], tuple[str, str, int] | None]:
    """The inside of a band's parenthesis (``inner`` normalised, ``original`` as typed, of the
    same length): its descriptor words with their offsets in ``inner``, the author's labels,
    and the first problem found as (kind, chunk, offset), kind ``number``, ``unknown`` or
    ``alone`` (assignment words that name no group), or None.

    The same few parentheses (``(s)``, ``(m, br)``) come back in every list: cached.
    """
    descriptors: list[tuple[str, int]] = []
    labels: list[str] = []
    assigned: list[tuple[str, int, str]] = []  # chunk, start, kind
    for item, offset in _split_items(inner, 0):
        parts = []
        for m in _CHUNK.finditer(item):
            chunk, start = m.group(0), offset + m.start()
            kind = _chunk_kind(chunk)
            if kind == "descriptor":
                descriptors.append((chunk, start))
            elif kind in ("number", "unknown"):
                return (), (), (kind, chunk, start)
            elif kind != "unit":
                parts.append((start, start + len(chunk), kind))
                assigned.append((chunk, start, kind))
        if parts:
            inside = [p for p in parts if p[2] != "descriptor"]
            text = original[inside[0][0] : inside[-1][1]]
            if any(inside[0][0] < d < inside[-1][1] for _, d in descriptors):
                text = " ".join(original[a:b] for a, b, _ in inside)
            labels.append(" ".join(text.split()))
    if assigned and not any(kind == "group" for _, _, kind in assigned):
        chunk, start, _ = assigned[0]
        return (), (), ("alone", chunk, start)
    return tuple(descriptors), tuple(labels), None


class _Located:
    """A text with line and column look-ups for error messages."""

    def __init__(self, text: str, source: str | None):
        self.original = text
        self.text = _normalise(text)
        self.source = source

    def where(self, start: int) -> tuple[int, int]:
        line = self.text.count("\n", 0, start) + 1
        col = start - (self.text.rfind("\n", 0, start) + 1) + 1
        return line, col

    def error(self, message: str, start: int | None) -> ReadError:
        if start is None:
            return ReadError(message, path=self.source)
        line, col = self.where(start)
        return ReadError(f"{message} (column {col})", path=self.source, line=line)

    def at(self, start: int) -> str:
        line, col = self.where(start)
        return f"line {line}, column {col}"


class _Parser(_Located):
    def __init__(self, text: str, source: str | None):
        super().__init__(text, source)
        self.toks = _tokens(self.text)
        self.starts = [t.start for t in self.toks]
        self.i = 0
        self.stop = len(self.toks)
        self.segment_mode = False

    def tok_index(self, char: int) -> int:
        """Index of the first token starting at or after character ``char``."""
        return bisect.bisect_left(self.starts, char)

    def peek(self, k: int) -> _Tok | None:
        return self.toks[k] if k < self.stop else None

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

    def first_band(self, k: int) -> int:
        """Index of the first band token at bracket depth 0 from token ``k`` (or self.stop)."""
        depth = 0
        while k < self.stop:
            tok = self.toks[k]
            if tok.kind in ("number", "range") and depth == 0:
                return k
            if tok.text in "([":
                depth += 1
            elif tok.text in ")]":
                depth = max(0, depth - 1)
            k += 1
        return k

    def prefix(self) -> tuple[list[str], str | None]:
        """Preparation tokens and the verbatim prefix (when it holds unknown words)."""
        end = self.first_band(self.i)
        if end == self.stop:
            any_number = any(t.kind in ("number", "range") for t in self.toks)
            if self.segment_mode and self.i < len(self.toks) and any_number:
                raise self.error(
                    f"the IR part starting at {self.toks[self.i].text!r} holds no band "
                    "positions; expected numbers in cm-1 such as 'IR (film) 3350 (br), "
                    "1715 (s) cm-1'",
                    self.toks[self.i].start,
                )
            raise self.error(
                "no band positions found; expected numbers in cm-1 such as "
                "'3350 (br), 1715 (s) cm-1'",
                None,
            )
        prefix_toks, self.i = self.toks[self.i : end], end
        if not prefix_toks:
            return [], None
        words = [t.text.lower().rstrip(".") for t in prefix_toks if t.kind == "word"]
        unknown = any(
            t.kind in ("number", "range", "dot")
            or (t.kind == "other" and t.text not in _PREFIX_SIGNS)
            for t in prefix_toks
        )
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

    def parenthesis(self, tok: _Tok, band_text: str) -> tuple[list[_Tok], list[str]]:
        """Descriptor words and assignment texts of the parenthesis opened by ``tok``."""
        limit = len(self.text)
        if self.stop < len(self.toks):
            limit = self.toks[self.stop].start
        depth, close = 0, -1
        for m in _BRACKET.finditer(self.text, tok.start, limit):
            if m.group() in "([":
                depth += 1
            else:
                depth -= 1
                if depth == 0:
                    close = m.start()
                    break
        if close < 0:
            raise self.error(f"'{tok.text}' is never closed", tok.start)
        self.i = max(self.i, bisect.bisect_right(self.starts, close, self.i, self.stop))
        begin = tok.start + 1
        words, labels, problem = _read_parenthesis(
            self.text[begin:close], self.original[begin:close]
        )
        if problem is not None:
            kind, chunk, at = problem
            if kind == "number":
                raise self.error(
                    f"number {chunk!r} in parentheses after band {band_text}: reflib reads "
                    f"strengths as words ({_ALLOWED}), not numbers",
                    begin + at,
                )
            extra = f" (a word such as {chunk!r} alone names no group)" if kind == "alone" else ""
            raise self.error(
                f"unknown word {chunk!r} after band {band_text}; allowed: {_ALLOWED}, "
                f"{_ASSIGNMENT_HINT}{extra}",
                begin + at,
            )
        return [_Tok("word", w, begin + at) for w, at in words], list(labels)

    def descriptors(self, band_text: str) -> tuple[list[_Tok], list[str], bool]:
        """Words after a band, bare or in parentheses, the author's labels found in its
        parentheses, and whether a unit was passed."""
        words: list[_Tok] = []
        labels: list[str] = []
        unit = False
        while self.i < self.stop:
            tok = self.toks[self.i]
            if tok.kind == "word" and tok.text.lower() != "and":
                words.append(tok)
            elif tok.kind == "unit":
                unit = True
            elif tok.text == "/":
                pass
            elif tok.text in "([":
                found, texts = self.parenthesis(tok, band_text)
                words += found
                labels += texts
                continue
            else:
                break
            self.i += 1
        return words, labels, unit

    def band(self, tok: _Tok) -> tuple[_Band, bool]:
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
        shoulder = sharp = False
        words, labels, unit = self.descriptors(tok.text)
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
            elif w in _SHARP:
                found = "sharp"
            else:
                hint = (
                    "an assignment goes in parentheses after the band, e.g. '1715 (s, C=O)'"
                    if _chunk_kind(words[k].text) == "group"
                    else _ASSIGNMENT_HINT
                )
                raise self.error(
                    f"unknown word {words[k].text!r} after band {tok.text}; allowed: {_ALLOWED}; "
                    f"{hint}",
                    words[k].start,
                )
            if found == "br":
                broad = True
            elif found == "sh":
                shoulder = True
            elif found == "sharp":
                sharp = True
            elif strength is not None and strength != found:
                raise self.error(
                    f"two strength words ({strength!r} and {found!r}) for band {tok.text}",
                    words[k].start,
                )
            else:
                strength = found
            if broad and sharp:
                raise self.error(f"band {tok.text} is called both broad and sharp", words[k].start)
            k += 1
        if broad and not np.isfinite(width):
            width = BROAD_WIDTH_HIGH if position > BROAD_SPLIT else BROAD_WIDTH_LOW
        label = ", ".join(labels)[:MAX_LABEL_CHARS] or None
        return _Band(position, width, strength, broad, shoulder, tok.start, label), unit

    def bands(self) -> tuple[list[_Band], int]:
        """The bands up to the end of the list (or of the IR part) and the character offset
        where reading stopped."""
        out: list[_Band] = []
        unit_end: int | None = None  # end of the last unit after a band (IR parts only)
        last_end = 0  # end of the last band with its words
        while self.i < self.stop:
            tok = self.toks[self.i]
            if tok.kind in ("number", "range"):
                band, unit = self.band(tok)
                out.append(band)
                last_end = self.toks[self.i - 1].end
                unit_end = last_end if unit else None
                continue
            if self.segment_mode and out and self.part_ends(tok, unit_end):
                return out, unit_end if unit_end is not None else last_end
            if tok.kind == "unit":
                unit_end = last_end = tok.end
            if tok.kind in ("nl", "unit") or tok.text in ",;" or tok.text.lower() == "and":
                self.i += 1
                continue
            if tok.kind == "dot":
                nxt = self.peek(self.i + 1)
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
        return out, unit_end if unit_end is not None else last_end

    def part_ends(self, tok: _Tok, unit_end: int | None) -> bool:
        """Whether the IR part ends at ``tok`` (a band has been read): after its unit when no
        band follows, at a ``;`` or ``.`` or line break followed by anything but a band."""
        k = self.i
        if tok.kind == "unit" or tok.text in ",;." or tok.kind in ("nl", "dot"):
            k += 1
            while k < self.stop and (
                self.toks[k].text in ",;" or self.toks[k].kind in ("nl", "unit")
            ):
                k += 1
            nxt = self.peek(k)
            band_follows = nxt is not None and nxt.kind in ("number", "range")
            if tok.kind == "unit":
                return not band_follows
            if tok.text == ",":
                return unit_end is not None and not band_follows
            return not band_follows and nxt is not None
        return unit_end is not None

    # -- a characterisation line ------------------------------------------------------------
    def band_like(self, k: int) -> bool:
        """Whether token ``k`` is a number that could be a band (not a quantity such as 85 mg)."""
        tok = self.toks[k]
        if tok.kind not in ("number", "range"):
            return False
        values = re.findall(r"\d+(?:\.\d+)*", tok.text)
        try:
            if not any(MIN_POSITION <= float(v) <= MAX_POSITION for v in values):
                return False
        except ValueError:  # '1.2.3': not a number at all
            return False
        nxt = self.toks[k + 1] if k + 1 < len(self.toks) else None
        if nxt is not None and nxt.text.lower().rstrip(".") in _QUANTITY_WORDS:
            return False
        return not (nxt is not None and nxt.text in ("%", "°"))

    def check_stray(self, lo: int, hi: int, where: str) -> None:
        """Refuse a number that could be a band between characters ``lo`` and ``hi``."""
        for k in range(self.tok_index(lo), len(self.toks)):
            tok = self.toks[k]
            if tok.start >= hi:
                return
            if self.band_like(k):
                raise self.error(
                    f"{tok.text} could be a band but lies {where}; reflib reads bands only in "
                    "the IR part (e.g. 'IR (film) 3350, 1715 cm-1'): move it there, or remove "
                    "it if it is not a band",
                    tok.start,
                )

    def check_table(self) -> None:
        """Refuse two or more lines of several bare numbers (a table, not a peak list)."""
        if any(t.kind in ("unit", "word", "punct") for t in self.toks):
            return
        rows: dict[int, int] = {}
        line = 1
        for t in self.toks:
            if t.kind == "nl":
                line += 1
            elif t.kind in ("number", "range"):
                rows[line] = rows.get(line, 0) + 1
        table = sorted(line for line, n in rows.items() if n >= 2)
        if len(table) >= 2:
            raise ReadError(
                f"lines {table[0]}-{table[-1]} are a table of numbers without a unit: reflib "
                "cannot tell band positions from other columns; write a peak list as "
                "'3350, 1715, 1240 cm-1' (commas, a unit) or give the spectrum as two columns",
                path=self.source,
                line=table[0],
            )

    def read_part(self, lo: int, hi: int, marker: str | None) -> _Segment:
        self.i, self.stop = self.tok_index(lo), self.tok_index(hi)
        start = self.toks[self.i].start if self.i < self.stop else lo
        prep, prep_text = self.prefix()
        bands, end = self.bands()
        return _Segment(prep, prep_text, bands, start, end, marker)

    def segments(self) -> list[_Segment]:
        markers = _markers(self.text)
        if not markers:
            self.check_table()
            return [self.read_part(0, len(self.text), None)]
        self.segment_mode = True
        if not any(m.kind == "IR" for m in markers):
            m = markers[0]
            raise self.error(
                f"no IR part: {m.text!r} starts {m.kind} data, and no IR segment follows; "
                "expected 'IR (preparation) 3350, 1715 cm-1' or 'νmax (KBr)/cm-1 3350, 1715'",
                m.start,
            )
        self.check_stray(0, markers[0].start, f"before {markers[0].text!r}, outside any part")
        out: list[_Segment] = []
        k = 0
        while k < len(markers):
            m = markers[k]
            if m.kind != "IR":
                k += 1
                continue
            # technique names inside the prefix ('IR (neat) νmax') belong to this part
            self.i, self.stop = self.tok_index(m.start), len(self.toks)
            first = self.first_band(self.i)
            first_at = self.toks[first].start if first < len(self.toks) else len(self.text)
            j = k + 1
            while j < len(markers) and markers[j].kind == "IR" and markers[j].start < first_at:
                j += 1
            limit = markers[j].start if j < len(markers) else len(self.text)
            seg = self.read_part(m.start, limit, m.text)
            nxt = f"{markers[j].text!r} at {self.at(markers[j].start)}" if j < len(markers) else ""
            last = self.toks[max(0, bisect.bisect_left(self.starts, seg.end) - 1)]
            where = f"after the IR part, which ends with {last.text!r} at {self.at(last.start)}"
            if nxt:
                where += f", and before {nxt}"
            self.check_stray(seg.end, limit, where)
            out.append(seg)
            k = j
        return out


# -- the plain form, read without the tokenizer ------------------------------------------------

#: One band of the plain form: a position with at most two words in parentheses.
_PLAIN_WORD = r"(?:vs|s|m|w|vw|br|sh)"
_PLAIN_BAND = (
    rf"(?P<pos>\d{{3,4}}(?:\.\d+)?)(?:\ \((?P<words>{_PLAIN_WORD}(?:,\ {_PLAIN_WORD})?)\))?"
)
_PLAIN_ANY = re.sub(r"\?P<\w+>", "?:", _PLAIN_BAND)
#: The plain form: one line, an optional ``IR (preparation):`` prefix, bands separated by
#: ``", "`` and the unit ``cm-1`` at the end. It is how reflib writes a list
#: (:meth:`PeakList.to_text`) and how most typed lists look; everything else is tokenized.
_PLAIN = re.compile(
    rf"[ \t]*(?:(?P<ir>IR)\ \((?P<prep>[A-Za-z][A-Za-z0-9]*)\):?\ )?"
    rf"(?P<bands>{_PLAIN_ANY}(?:,\ {_PLAIN_ANY})*)\ cm-1[ \t]*\r?\n?"
)
_PLAIN_ONE = re.compile(_PLAIN_BAND)


def _plain_words() -> dict[str, tuple[str | None, bool, bool]]:
    """Every parenthesis of the plain form that the parser accepts -> (strength, broad,
    shoulder); a band without one is ``""``. Two different strength words are left out (the
    parser refuses them)."""
    words = ["vs", "s", "m", "w", "vw", "br", "sh"]
    out: dict[str, tuple[str | None, bool, bool]] = {"": (None, False, False)}
    for combo in [[a] for a in words] + [[a, b] for a in words for b in words]:
        strengths = [w for w in combo if w in _STRENGTHS]
        if len(set(strengths)) <= 1:  # 'vs, vs' is one strength; 'vs, w' is refused
            out[", ".join(combo)] = (
                strengths[0] if strengths else None,
                "br" in combo,
                "sh" in combo,
            )
    return out


_PLAIN_DESCRIBED = _plain_words()


def _plain_peaks(text: str, source: str | None) -> PeakList | None:
    """The peak list of a text in the plain form (:data:`_PLAIN`), the same one the tokenizing
    parser reads from it; None for any other text, and for one the parser refuses (a position
    out of range, a position given twice, two strength words), so that the parser gives the
    error with its line and column."""
    m = _PLAIN.fullmatch(text)
    if m is None:
        return None
    prep: list[str] = []
    if m.group("ir") is not None:
        token = PREP_WORDS.get(m.group("prep").lower())
        if token is None or token == "fluorocarbon":  # a word that needs more words around it
            return None
        prep = [token]
    found = _PLAIN_ONE.findall(text, m.start("bands"), m.end("bands"))
    positions = [float(pos) for pos, _ in found]
    if min(positions) < MIN_POSITION or max(positions) > MAX_POSITION:
        return None
    if len(set(positions)) != len(positions):
        return None
    described = [_PLAIN_DESCRIBED.get(words) for _, words in found]
    if None in described:
        return None
    broad = [d[1] for d in described]  # type: ignore[index]
    widths = [
        (BROAD_WIDTH_HIGH if x > BROAD_SPLIT else BROAD_WIDTH_LOW) if b else np.nan
        for x, b in zip(positions, broad)
    ]
    given = [d[0] for d in described]  # type: ignore[index]
    start = m.start("ir") if m.group("ir") is not None else m.start("bands")
    seg = _Segment(prep, None, [], start, m.end("bands") + len(" cm-1"), m.group("ir"))
    meta = _meta(_Located(text, source), seg, text, source, given)
    strengths = [g or "m" for g in given]
    return PeakList(
        positions=np.array(positions),
        intensities=np.array([word_intensity(w) for w in strengths]),
        widths=np.array(widths),
        strengths=strengths,
        broad=np.array(broad, dtype=bool),
        shoulder=np.array([d[2] for d in described], dtype=bool),  # type: ignore[index]
        meta=meta,
    )


def _meta(
    parser: _Located, seg: _Segment, text: str, source: str | None, given: list[str | None]
) -> Metadata:
    """The metadata of a segment's peak list; ``given`` holds each band's strength word as
    typed (None where there was none)."""
    meta = Metadata(prep=seg.prep)
    if source is not None:
        meta.source_file = Path(source).name
    n_given = sum(g is not None for g in given)
    if n_given == 0:
        meta.extra["intensities"] = "not given"
    elif n_given < len(given):
        meta.extra["intensities"] = "partly given"
    if seg.prep_text:
        meta.extra["prep_text"] = seg.prep_text
    meta.extra["peak_text"] = text.strip()[:2000]
    if seg.marker is not None:
        meta.extra["ir_segment"] = " ".join(parser.original[seg.start : seg.end].split())[:2000]
        (l1, c1), (l2, c2) = parser.where(seg.start), parser.where(max(seg.start, seg.end - 1))
        meta.extra["ir_segment_at"] = (
            f"line {l1}, columns {c1}-{c2}"
            if l1 == l2
            else f"line {l1} column {c1} to line {l2} column {c2}"
        )
    return meta


def _peak_list(parser: _Parser, seg: _Segment, text: str, source: str | None) -> PeakList:
    bands = seg.bands
    seen: dict[float, int] = {}
    for b in bands:
        if b.position in seen:
            first_line, _ = parser.where(seen[b.position])
            raise parser.error(
                f"band {b.position:g} cm-1 is given twice (first on line {first_line})", b.start
            )
        seen[b.position] = b.start
    meta = _meta(parser, seg, text, source, [b.strength for b in bands])
    strengths = [b.strength or "m" for b in bands]
    labels = [b.label for b in bands]
    return PeakList(
        positions=np.array([b.position for b in bands]),
        intensities=np.array([word_intensity(s) for s in strengths]),
        widths=np.array([b.width for b in bands]),
        strengths=strengths,
        broad=np.array([b.broad for b in bands], dtype=bool),
        shoulder=np.array([b.shoulder for b in bands], dtype=bool),
        meta=meta,
        labels=labels if any(v is not None for v in labels) else None,
    )


def parse_peak_texts(text: str, *, source: str | None = None) -> list[PeakList]:
    """Every peak list in ``text``: one for a plain list, one per IR segment of a
    characterisation line (``IR (KBr) ... cm-1; IR (CHCl3) ... cm-1`` gives two).

    Same reading and errors as :func:`parse_peak_text`.

    >>> [pl.meta.prep for pl in parse_peak_texts("IR (KBr) 3320, 1680 cm-1; IR (CHCl3) 3440 cm-1")]
    [['kbr'], ['chcl3']]
    """
    plain = _plain_peaks(text, source)
    if plain is not None:
        return [plain]
    parser = _Parser(text, source)
    return [_peak_list(parser, seg, text, source) for seg in parser.segments()]


def parse_peak_text(text: str, *, source: str | None = None) -> PeakList:
    """Read a typed peak list (positions in cm-1 with strength words) into a PeakList.

    Parameters
    ----------
    text:
        The list as typed, e.g. ``'IR (film): 3350 (br), 2935 (s), 1715 (vs, C=O), 1240 cm-1'``,
        or a whole characterisation line, of which the IR part is read.
    source:
        File name used in error messages.

    Returns
    -------
    PeakList
        Positions in cm-1 (ascending), relative intensities from the strength words
        (normalised so the strongest is 1), widths FWHM in cm-1 (NaN unless broad or a range),
        ``labels`` the author's assignments (None when the list has none), ``meta.prep``
        preparation tokens, ``meta.extra`` with ``intensities`` ('not given' or 'partly given'
        when words are missing), ``prep_text`` (a prefix with unknown words), ``peak_text``
        (the text as typed, up to 2000 characters) and, for a characterisation line,
        ``ir_segment`` and ``ir_segment_at`` (the part read and where it is).

    Raises
    ------
    ReadError
        With the line (and the column in the message) for a malformed or out-of-range number
        (``1715.5.3``, ``17150``), an unknown word, a duplicate position, a number outside the
        IR part that could be a band, two IR segments (read them with
        :func:`parse_peak_texts`); without a line when the text holds no band position at all.

    Example
    -------
    >>> pl = parse_peak_text("IR (film): 3350 (br, OH), 1715 (vs) cm-1")
    >>> pl.meta.prep, pl.to_text()
    (['film'], '3350 (m, br, OH), 1715 (vs) cm-1')
    >>> float(pl.widths[1])
    150.0
    """
    plain = _plain_peaks(text, source)
    if plain is not None:
        return plain
    parser = _Parser(text, source)
    segments = parser.segments()
    if len(segments) > 1:
        named = "; ".join(
            f"{parser.original[s.start : s.end][:40].strip()!r} at {parser.at(s.start)}"
            for s in segments
        )
        raise ReadError(
            f"holds {len(segments)} IR segments ({named}); reflib reads one peak list here: "
            "keep one, or read them all with read_all()",
            path=source,
            line=parser.where(segments[1].start)[0],
        )
    return _peak_list(parser, segments[0], text, source)


# -- the author's labels against reflib's reading ---------------------------------------------


@dataclass(frozen=True)
class LabelNote:
    """One band's label by the author beside reflib's reading of the same band.

    ``agree`` is True when both name a common bond or group (``C=O``, ``O-H``, ``ester``),
    False when they name none in common, None when either side names nothing to compare.
    """

    position: float  # cm-1
    author: str
    reflib: str
    agree: bool | None

    @property
    def text(self) -> str:
        verdict = {True: "", False: " (they differ)", None: ""}[self.agree]
        reading = self.reflib or "no group in its table fits"
        return f"author says {self.author} at {self.position:.0f}; reflib: {reading}{verdict}"

    def to_dict(self) -> dict[str, object]:
        return {
            "position": round(self.position, 2),
            "author": self.author,
            "reflib": self.reflib,
            "agree": self.agree,
        }


def _label_terms(text: str) -> set[str]:
    """Bonds (``C=O``, ``H-O``), formulae (``NO2``) and group words named in a label."""
    terms: set[str] = set()
    norm = text.translate(_CHAR_MAP).replace("≡", "#")
    for m in re.finditer(r"[A-Z][a-z]?(?:\s?[-=#]\s?[A-Z][a-z]?)+", norm):
        atoms = re.findall(r"[A-Z][a-z]?|[-=#]", m.group(0).replace(" ", ""))
        for a, bond, b in zip(atoms[0::2], atoms[1::2], atoms[2::2]):
            terms.add(f"{a}{bond}{b}" if bond != "-" else "-".join(sorted((a, b))))
    for m in re.finditer(r"(?<![A-Za-z])([A-Z][a-z]?)H(\d?)(?![a-z])", norm):
        terms.add("-".join(sorted((m.group(1), "H"))))
    for m in re.finditer(r"[A-Z][A-Za-z0-9]*\d[A-Za-z0-9]*", norm):
        terms.add(m.group(0))
    for w in re.findall(r"[a-z]+", norm.lower()):
        if w in _GROUP_WORDS:
            terms.add({"arom": "aromatic", "aliph": "aliphatic"}.get(w, w))
    return terms


def compare_labels(peaks: PeakList, lookup: Callable[[PeakList], Sequence[str]]) -> list[LabelNote]:
    """The author's label of each labelled band beside reflib's reading of it.

    ``lookup`` gives reflib's short reading of every band of a peak list, in its ascending
    order (reflib uses :func:`reflib.chem.groups.band_texts`, the labeller of every output).
    Returns one :class:`LabelNote` per labelled band, high to low wavenumber; an empty list
    when the list has no labels (``lookup`` is then not called).

    >>> pl = PeakList([1760.0, 2950.0], [1.0, 0.4], labels=["C=O", None])
    >>> [n.text for n in compare_labels(pl, lambda p: ["ester C=O?", "alkyl C-H stretch?"])]
    ['author says C=O at 1760; reflib: ester C=O?']
    """
    if peaks.labels is None or not any(peaks.labels):
        return []
    readings = list(lookup(peaks))
    notes = []
    for k in range(len(peaks) - 1, -1, -1):
        author = peaks.labels[k]
        if not author:
            continue
        reading = " ".join(str(readings[k]).split()) if k < len(readings) else ""
        mine, theirs = _label_terms(author), _label_terms(reading)
        agree = bool(mine & theirs) if mine and theirs else None
        notes.append(LabelNote(float(peaks.positions[k]), author, reading, agree))
    return notes


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


__all__ = [
    "parse_peak_text",
    "parse_peak_texts",
    "compare_labels",
    "LabelNote",
    "looks_like_peak_text",
    "PREP_WORDS",
]
