"""JCAMP-DX reader and writer for infrared spectra and peak tables.

Written from the rules of the JCAMP-DX standard (4.24 for infrared, 5.01 for the general form):

* a file is a sequence of labelled data records ``##LABEL=value``; a value runs on over the
  following lines until the next ``##``; ``$$`` starts a comment that runs to the end of the line;
* labels are matched after normalisation: upper case, with spaces, dashes, slashes and
  underscores removed (``##X UNITS=``, ``##xunits=`` and ``##X_UNITS=`` are one label);
  labels starting ``##$`` are private to the program that wrote them;
* a block runs from ``##TITLE=`` to ``##END=``; a block of ``##DATA TYPE=LINK`` holds nested
  blocks (a compound file);
* ``##XYDATA=(X++(Y..Y))`` lines hold an abscissa and ordinates in AFFN (plain numbers) or ASDF
  (SQZ ``@A-Ia-i`` absolute values, DIF ``%J-Rj-r`` differences, DUP ``S-Zs`` repeat counts,
  PAC ``+``/``-`` signed numbers); when a line ends in DIF form the next line starts with the
  last ordinate again as a check (the "Y check"), which the reader verifies and drops;
* ``##XYPOINTS=(XY..XY)`` and ``##PEAK TABLE=(XY..XY)`` / ``(XYW..XYW)`` hold groups of values.

:func:`parse_jcamp` returns every infrared block; :func:`write_jcamp` writes JCAMP-DX 5.01.

>>> text = write_jcamp(Spectrum([1000.0, 1001.0, 1002.0], [0.1, 0.5, 0.2]))
>>> parse_jcamp(text)[0].y.tolist()
[0.1, 0.5, 0.2]
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

import numpy as np

from reflib.errors import ReadError, ValidationError
from reflib.spectrum import Metadata, PeakList, Spectrum, micrometres_to_wavenumber

#: Most points one data record may decode to (a guard against hostile or corrupt files).
MAX_POINTS = 5_000_000
#: Deepest nesting of LINK blocks accepted.
MAX_DEPTH = 8
#: Longest data line :func:`write_jcamp` writes (the standard asks for at most 80 characters).
LINE_LENGTH = 80
#: Significant digits of AFFN values written by :func:`write_jcamp`.
AFFN_DIGITS = 7
#: DIFDUP ordinates are integers up to about this size (YFACTOR = max |y| / this), so the
#: rounding error of a written ordinate is at most 0.5 / DIF_SCALE of the largest |y|.
DIF_SCALE = 1.0e6

#: Transmittance whose largest value is at most FRACTION_MAX is a 0..1 fraction; from
#: PERCENT_MIN up it is percent, however far above 100 a drifting baseline takes it. Real
#: fractions overshoot 1 a little (noise at an opaque band edge reaches 1.505 in sqzdupd1.jdx
#: of R. J. Lancashire's test set), and a percent spectrum whose highest point is below 10 %
#: is unusable anyway.
FRACTION_MAX = 2.0
#: The X of each XYDATA line must lie within this many point spacings (plus rounding) of
#: FIRSTX + i*DELTAX. The published test files stay within 1.08 (sulphur hexafluoride.jdx).
X_CHECK_SPACINGS = 1.5
PERCENT_MIN = 10.0

Readable = Spectrum | PeakList

# ----------------------------------------------------------------------------------------------
# Labelled records and blocks
# ----------------------------------------------------------------------------------------------

_LABEL_JUNK = re.compile(r"[\s\-/_]+")


def normalise_label(label: str) -> str:
    """The label as the standard matches it: upper case, no spaces, dashes, slashes, underscores.

    >>> normalise_label("X_Units"), normalise_label("DATA TYPE"), normalise_label("JCAMP-DX")
    ('XUNITS', 'DATATYPE', 'JCAMPDX')
    """
    return _LABEL_JUNK.sub("", label).upper()


@dataclass
class _Record:
    label: str  # normalised
    raw_label: str  # as written, stripped
    value: str  # text after '=' on the label line, comment stripped
    line: int  # 1-based line of the label
    more: list[tuple[int, str]] = field(default_factory=list)  # continuation lines

    def text(self) -> str:
        """The whole value: first line and continuation lines, joined by newlines, stripped."""
        parts = [self.value.strip()] + [t.strip() for _, t in self.more]
        return "\n".join(p for p in parts if p).strip()


@dataclass
class _Block:
    line: int
    records: list[_Record] = field(default_factory=list)
    children: list[_Block] = field(default_factory=list)
    depth: int = 0

    def get(self, label: str) -> _Record | None:
        found = None
        for rec in self.records:
            if rec.label == label:
                found = rec
        return found

    def value(self, label: str) -> str | None:
        rec = self.get(label)
        return None if rec is None else rec.text()

    @property
    def data_type(self) -> str:
        value = self.value("DATATYPE") or ""
        return " ".join(value.upper().split())

    def data_record(self) -> _Record | None:
        for label in ("XYDATA", "XYPOINTS", "PEAKTABLE"):
            rec = self.get(label)
            if rec is not None:
                return rec
        return None

    def has_any_data(self) -> bool:
        data_labels = {"XYDATA", "XYPOINTS", "PEAKTABLE", "NTUPLES", "PEAKASSIGNMENTS", "RADATA"}
        return any(r.label in data_labels for r in self.records)


_LINE_SPLIT = re.compile(r"\r\n|\r|\n")


def _strip_comment(text: str) -> str:
    i = text.find("$$")
    return text if i < 0 else text[:i]


def _records(text: str, source: str | None) -> list[_Record]:
    """Split text into labelled records, stripping comments and joining continuation lines."""
    records: list[_Record] = []
    for n, line in enumerate(_LINE_SPLIT.split(text), start=1):
        stripped = line.lstrip()
        if stripped.startswith("##"):
            body = stripped[2:]
            eq = body.find("=")
            if eq < 0:
                raw, value = _strip_comment(body), ""
            else:
                raw, value = body[:eq], _strip_comment(body[eq + 1 :])
            raw = raw.strip()
            label = normalise_label(raw)
            if not label:
                continue
            records.append(_Record(label, raw, value, n))
        else:
            content = _strip_comment(line)
            if records and content.strip():
                records[-1].more.append((n, content))
    return records


def _blocks(records: list[_Record], source: str | None) -> list[_Block]:
    """Group records into (possibly nested) blocks, TITLE to END."""
    top: list[_Block] = []
    stack: list[_Block] = []

    def open_block(line: int) -> _Block:
        if stack:
            parent = stack[-1]
            if parent.data_type != "LINK" and parent.has_any_data():
                # a new TITLE after a block's data without ##END=: the earlier block is over
                stack.pop()
                return open_block(line)
            if len(stack) >= MAX_DEPTH:
                raise ReadError(
                    f"blocks nested more than {MAX_DEPTH} deep; expected LINK blocks holding "
                    "data blocks (is an ##END= missing?)",
                    path=source,
                    line=line,
                )
            block = _Block(line, depth=len(stack))
            parent.children.append(block)
        else:
            block = _Block(line)
            top.append(block)
        stack.append(block)
        return block

    for rec in records:
        if rec.label == "TITLE":
            open_block(rec.line).records.append(rec)
        elif rec.label == "END":
            if stack:
                stack.pop()
        else:
            if not stack:
                open_block(rec.line)
            stack[-1].records.append(rec)
    return top


def _leaves(blocks: list[_Block]) -> list[_Block]:
    """Every block in document order (depth is bounded by MAX_DEPTH, so no runaway)."""
    out: list[_Block] = []
    todo = list(reversed(blocks))
    while todo:
        block = todo.pop()
        out.append(block)
        todo.extend(reversed(block.children))
    return out


# ----------------------------------------------------------------------------------------------
# Units and kinds
# ----------------------------------------------------------------------------------------------

_WAVENUMBER_UNITS = {
    "1/CM",
    "CM-1",
    "CM^-1",
    "CM**-1",
    "CM^(-1)",
    "1/CM-1",
    "WAVENUMBERS",
    "WAVENUMBER",
    "WAVENUMBER(CM-1)",
    "WAVENUMBERS(CM-1)",
    "1/CENTIMETERS",
}
_MICRON_UNITS = {
    "MICROMETERS",
    "MICROMETRES",
    "MICROMETER",
    "MICROMETRE",
    "MICRONS",
    "MICRON",
    "UM",
    "\u00b5M",
    "\u03bcM",
}
_NANOMETRE_UNITS = {"NANOMETERS", "NANOMETRES", "NANOMETER", "NANOMETRE", "NM"}


def _x_unit_kind(units: str | None) -> str | None:
    """'cm-1', 'um', 'nm', or None for anything else (or missing)."""
    if units is None:
        return None
    key = re.sub(r"\s+", "", units.upper())
    if key in _WAVENUMBER_UNITS:
        return "cm-1"
    if key in _MICRON_UNITS:
        return "um"
    if key in _NANOMETRE_UNITS:
        return "nm"
    return None


_ABSORBANCE_LIKE = re.compile(
    r"ARBITRARY|KUBELKA|BASE\s*10|ABSORPTIVITY|ABSORPTION|OPTICAL\s+DENSITY|LOG\s*\(\s*1\s*/\s*R"
)


def _y_unit_kind(units: str | None) -> str | None:
    """'transmittance', 'absorbance' or None when the unit is not one reflib reads."""
    if units is None:
        return None
    key = " ".join(units.upper().split())
    if "TRANSMIT" in key or key in {"T", "%T", "% T", "PERCENT T"}:
        return "transmittance"
    if "ABSORBANCE" in key or key in {"A", "ABS", "AU"}:
        return "absorbance"
    if _ABSORBANCE_LIKE.search(key):
        return "absorbance"
    return None


def _is_infrared(block: _Block) -> bool:
    dtype = block.data_type
    if dtype:
        return ("INFRARED" in dtype or dtype.startswith("IR ") or dtype == "IR") and (
            "INTERFEROGRAM" not in dtype
        )
    # no data type: decide by the abscissa unit
    return _x_unit_kind(block.value("XUNITS")) in ("cm-1", "um")


def _type_name(block: _Block) -> str:
    if block.data_type:
        return block.data_type
    units = block.value("XUNITS")
    if units:
        return f"data with X units {units.strip()}"
    return "data of no stated type"


# ----------------------------------------------------------------------------------------------
# Numbers and ASDF
# ----------------------------------------------------------------------------------------------

_SQZ = {c: i for i, c in enumerate("@ABCDEFGHI")} | {c: -(i + 1) for i, c in enumerate("abcdefghi")}
_DIF = {c: i for i, c in enumerate("%JKLMNOPQR")} | {c: -(i + 1) for i, c in enumerate("jklmnopqr")}
_DUP = {c: i + 1 for i, c in enumerate("STUVWXYZs")}

_TOKEN = re.compile(
    r"(?P<sep>[\s,;]+)"
    r"|(?P<affn>[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]\d+)?)"
    r"|(?P<sqz>[@A-Ia-i])(?P<sqzd>\d*\.?\d*)"
    r"|(?P<dif>[%J-Rj-r])(?P<difd>\d*\.?\d*)"
    r"|(?P<dup>[S-Zs])(?P<dupd>\d*)"
    r"|(?P<miss>\?)"
)

_TOKEN_KINDS = ("sep", "affn", "sqz", "dif", "dup", "miss")
_ABS, _DIFK, _DUPK = 0, 1, 2


def _compressed_number(first: int, digits: str) -> float:
    text = str(abs(first)) + digits
    value = float(text) if "." in text else float(int(text))
    return -value if first < 0 else value


def _tokens(line: str, n: int, source: str | None) -> list[tuple[int, float]]:
    """Tokens of one XYDATA line: (kind, value) with kind absolute, difference or repeat."""
    out: list[tuple[int, float]] = []
    pos, end = 0, len(line)
    while pos < end:
        m = _TOKEN.match(line, pos)
        if m is None:
            char = line[pos]
            raise ReadError(
                f"unexpected character {char!r} in XYDATA; expected numbers or ASDF characters "
                "(@A-Ia-i, %J-Rj-r, S-Zs, +, -)",
                path=source,
                line=n,
            )
        pos = m.end()
        kind = next(k for k in _TOKEN_KINDS if m.group(k) is not None)
        if kind == "sep":
            continue
        if kind == "miss":
            raise ReadError(
                "'?' (missing ordinate) in XYDATA; reflib needs every point", path=source, line=n
            )
        try:
            if kind == "affn":
                out.append((_ABS, float(m.group("affn"))))
            elif kind == "sqz":
                out.append((_ABS, _compressed_number(_SQZ[m.group("sqz")], m.group("sqzd"))))
            elif kind == "dif":
                out.append((_DIFK, _compressed_number(_DIF[m.group("dif")], m.group("difd"))))
            else:
                count = int(str(_DUP[m.group("dup")]) + m.group("dupd"))
                out.append((_DUPK, float(count)))
        except (ValueError, OverflowError):
            raise ReadError(
                f"malformed number {m.group(0)[:30]!r} in XYDATA", path=source, line=n
            ) from None
    for _kind, value in out:
        if not math.isfinite(value):
            raise ReadError("number too large in XYDATA", path=source, line=n)
    return out


def _number(text: str | None, name: str, rec: _Record | None, source: str | None) -> float | None:
    if text is None or not text.strip():
        return None
    m = re.match(r"\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eEdD][+-]?\d+)?)", text)
    if m is None:
        raise ReadError(
            f"##{name}= should be a number, got {text.strip()[:40]!r}",
            path=source,
            line=rec.line if rec else None,
        )
    value = float(m.group(1).replace("d", "e").replace("D", "e"))
    if not math.isfinite(value):
        raise ReadError(f"##{name}= is not finite", path=source, line=rec.line if rec else None)
    return value


def _block_number(block: _Block, label: str, source: str | None) -> float | None:
    rec = block.get(label)
    return None if rec is None else _number(rec.text(), rec.raw_label, rec, source)


@dataclass
class _Decoded:
    y: np.ndarray  # raw ordinates (before YFACTOR)
    line_x: list[tuple[int, float, int]]  # (line number, raw abscissa, index of its first Y)


def _decode_xydata(rec: _Record, source: str | None, limit: int, expected: int) -> _Decoded:
    """Decode the lines of an ``(X++(Y..Y))`` record into raw ordinates with Y checks applied."""
    chunks: list[np.ndarray] = []
    count = 0
    line_x: list[tuple[int, float, int]] = []
    prev_last: float | None = None
    prev_dif = False
    first_content = rec.value.strip()
    m = re.match(r"\(\s*X\s*\+\+\s*\(\s*[YRI]\s*\.\.\s*[YRI]\s*\)\s*\)", first_content, re.I)
    if m is None:
        raise ReadError(
            f"XYDATA form {first_content[:30]!r} not supported; expected (X++(Y..Y))",
            path=source,
            line=rec.line,
        )
    lines = list(rec.more)
    rest = first_content[m.end() :]
    if rest.strip():
        lines.insert(0, (rec.line, rest))
    for n, text in lines:
        toks = _tokens(text, n, source)
        if not toks:
            continue
        kind, xval = toks[0]
        if kind != _ABS:
            raise ReadError(
                "an XYDATA line must start with its abscissa (X) value", path=source, line=n
            )
        ys: list[float] = []
        prev_tok: tuple[int, float] | None = None
        first_kind: int | None = None
        last_kind: int | None = None
        for kind, value in toks[1:]:
            if kind == _ABS:
                ys.append(value)
                prev_tok = (kind, value)
                last_kind = kind
            elif kind == _DIFK:
                if ys:
                    base = ys[-1]
                elif prev_last is not None:
                    base = prev_last
                else:
                    raise ReadError(
                        "the first ordinate is a difference (DIF) with nothing before it",
                        path=source,
                        line=n,
                    )
                ys.append(base + value)
                prev_tok = (kind, value)
                last_kind = kind
            else:
                if prev_tok is None:
                    raise ReadError(
                        "a repeat count (DUP) with no value before it", path=source, line=n
                    )
                repeat = int(value) - 1
                if repeat < 0:
                    raise ReadError("a repeat count (DUP) of zero", path=source, line=n)
                if count + len(ys) + repeat > limit:
                    raise ReadError(
                        f"XYDATA decodes to more than {limit} points", path=source, line=n
                    )
                if prev_tok[0] == _ABS:
                    ys.extend([prev_tok[1]] * repeat)
                else:
                    step = prev_tok[1]
                    base = ys[-1]
                    ys.extend((base + step * np.arange(1, repeat + 1)).tolist())
            if first_kind is None:
                first_kind = kind
        if not ys:
            continue
        start = count
        if prev_dif and first_kind == _ABS:
            assert prev_last is not None
            if not math.isclose(ys[0], prev_last, rel_tol=1e-9, abs_tol=1e-9):
                if count == expected and len(ys) == 1 and (n, text) == lines[-1]:
                    # a lone value after all NPOINTS points on the record's last line is a
                    # terminator some writers add (SPECFILE.DX of the JCAMP-DX.org set)
                    break
                raise ReadError(
                    f"Y check failed: this line starts with {ys[0]:g} but the previous line "
                    f"ended with {prev_last:g} (the DIF form requires them to be equal)",
                    path=source,
                    line=n,
                )
            ys = ys[1:]
            start = count - 1
        line_x.append((n, xval, start))
        if ys:
            arr = np.asarray(ys, dtype=float)
            chunks.append(arr)
            count += arr.size
            prev_last = float(arr[-1])
        if count > limit:
            raise ReadError(f"XYDATA decodes to more than {limit} points", path=source, line=n)
        prev_dif = last_kind == _DIFK
    y = np.concatenate(chunks) if chunks else np.zeros(0)
    return _Decoded(y, line_x)


_AFFN = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?|\?")
_GROUP_SEP = re.compile(r"[\s,;]+")


def _groups(rec: _Record, width: int, source: str | None, limit: int) -> np.ndarray:
    """Values of an ``(XY..XY)`` / ``(XYW..XYW)`` record as an (n, width) array."""
    first = rec.value.strip()
    m = re.match(r"\(\s*[A-Z]+\s*\.\.\s*[A-Z]+\s*\)", first, re.I)
    lines = list(rec.more)
    if m is not None and first[m.end() :].strip():
        lines.insert(0, (rec.line, first[m.end() :]))
    values: list[float] = []
    for n, text in lines:
        for piece in _GROUP_SEP.split(text.strip()):
            if not piece:
                continue
            if _AFFN.fullmatch(piece) is None:
                raise ReadError(
                    f"unexpected {piece[:20]!r} in ##{rec.raw_label}=; expected numbers in "
                    "groups separated by spaces or semicolons",
                    path=source,
                    line=n,
                )
            if piece == "?":
                raise ReadError(
                    f"'?' (missing value) in ##{rec.raw_label}=; reflib needs every value",
                    path=source,
                    line=n,
                )
            values.append(float(piece))
            if len(values) > limit * width:
                raise ReadError(
                    f"##{rec.raw_label}= holds more than {limit} points", path=source, line=n
                )
    if len(values) % width:
        raise ReadError(
            f"##{rec.raw_label}= holds {len(values)} numbers, not a whole number of groups of "
            f"{width}",
            path=source,
            line=rec.line,
        )
    arr = np.asarray(values, dtype=float).reshape(-1, width)
    if not np.all(np.isfinite(arr)):
        raise ReadError(f"##{rec.raw_label}= holds a number too large", path=source, line=rec.line)
    return arr


# ----------------------------------------------------------------------------------------------
# Metadata and preparation words
# ----------------------------------------------------------------------------------------------

#: Labels the reader turns into fields or arrays (so they are not kept in ``meta.extra``) and
#: the writer writes itself.
_OWN_LABELS = {
    "TITLE",
    "END",
    "JCAMPDX",
    "DATATYPE",
    "DATACLASS",
    "ORIGIN",
    "OWNER",
    "RESOLUTION",
    "STATE",
    "SAMPLINGPROCEDURE",
    "XUNITS",
    "YUNITS",
    "XFACTOR",
    "YFACTOR",
    "FIRSTX",
    "LASTX",
    "NPOINTS",
    "DELTAX",
    "FIRSTY",
    "LASTY",
    "MAXX",
    "MINX",
    "MAXY",
    "MINY",
    "XYDATA",
    "XYPOINTS",
    "PEAKTABLE",
    "BLOCKS",
    "$REFLIBPREP",
    "$REFLIBPEAKWORDS",
    "$REFLIBPEAKLABELS",
}

_SOLVENTS = [
    ("ccl4", r"ccl4|carbon\s+tetrachloride"),
    ("chcl3", r"chcl3|chloroform"),
    ("cdcl3", r"cdcl3|deuterochloroform|chloroform-d"),
    ("ch2cl2", r"ch2cl2|dichloromethane|methylene\s+chloride"),
    ("cs2", r"cs2|carbon\s+disulfide|carbon\s+disulphide"),
]


def preparation_tokens(*texts: str | None) -> list[str]:
    """reflib preparation tokens clearly named in free text (title, sampling procedure, state).

    Conservative: a solvent counts only in a solution context ("in CCl4", "CHCl3 solution"),
    KBr only as a pellet or disc, gas only as a state or "gas phase".

    >>> preparation_tokens("Nujol mull", None, "solid")
    ['nujol']
    >>> preparation_tokens("10% in CCl4 solution"), preparation_tokens("chloroform")
    (['ccl4'], [])
    """
    text = " ".join(t for t in texts if t).lower()
    found: list[str] = []

    def add(token: str) -> None:
        if token not in found:
            found.append(token)

    if re.search(r"\bnujol\b|mineral[\s-]+oil|paraffin[\s-]+oil\s+mull", text):
        add("nujol")
    if re.search(r"fluorolube|fluorocarbon\s+(oil|mull)|perfluoro\w*\s+(oil\s+)?mull", text):
        add("fluorocarbon")
    if re.search(r"\bkbr\b[\s-]*(pellet|disc|disk|wafer|pressed|matrix)|pressed\s+kbr", text):
        add("kbr")
    if re.search(r"\batr\b|attenuated\s+total\s+(internal\s+)?reflect", text):
        add("atr")
    if re.search(r"\bfilm\b", text):
        add("film")
    if re.search(r"\bneat\b", text):
        add("neat")
    solution = re.search(r"\bsolution\b|\bsoln\b|\bdissolved\b", text) is not None
    for token, pattern in _SOLVENTS:
        named = rf"(?<![a-z0-9])(?:{pattern})(?![a-z0-9])"
        if re.search(rf"\bin\s+{named}", text) or (solution and re.search(named, text)):
            add(token)
    if re.search(r"\b(gas|vapou?r)[\s-]+(phase|cell)\b", text):
        add("gas")
    return found


def _state_tokens(state: str | None) -> list[str]:
    if state and re.match(r"\s*(gas|gaseous|vapou?r)\b", state, re.I):
        return ["gas"]
    return []


def _parse_resolution(text: str | None) -> float | None:
    if not text:
        return None
    m = re.match(r"\s*(\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?", text)
    if m is None:
        return None
    value = float(m.group(0))
    return value if value > 0 and math.isfinite(value) else None


def _metadata(block: _Block, source: str | None) -> Metadata:
    def val(label: str) -> str | None:
        v = block.value(label)
        return v if v else None

    meta = Metadata(
        title=val("TITLE"),
        origin=val("ORIGIN"),
        owner=val("OWNER"),
        data_type=block.data_type or None,
        resolution=_parse_resolution(val("RESOLUTION")),
        state=val("STATE"),
        sampling_procedure=val("SAMPLINGPROCEDURE"),
        y_units=val("YUNITS"),
    )
    for rec in block.records:
        if rec.label in _OWN_LABELS:
            continue
        value = rec.text()
        if value:
            meta.extra[rec.raw_label] = value
    if val("RESOLUTION") and meta.resolution is None:
        meta.extra["RESOLUTION"] = val("RESOLUTION") or ""
    prep_label = val("$REFLIBPREP")
    if prep_label is not None:
        meta.prep = prep_label.split()
    else:
        meta.prep = preparation_tokens(meta.title, meta.sampling_procedure, meta.state)
        for token in _state_tokens(meta.state):
            if token not in meta.prep:
                meta.prep.append(token)
    return meta


# ----------------------------------------------------------------------------------------------
# Reading one block
# ----------------------------------------------------------------------------------------------


def _to_wavenumber(x: np.ndarray, unit: str, block: _Block, source: str | None) -> np.ndarray:
    if unit == "cm-1":
        return x
    if np.any(x <= 0):
        raise ReadError(
            f"wavelengths must be positive, got {float(x.min()):g}",
            path=source,
            line=block.line,
        )
    if unit == "um":
        return micrometres_to_wavenumber(x)
    return 1.0e7 / x  # nanometres (near infrared)


def _block_units(block: _Block, source: str | None) -> tuple[str, str]:
    xunits = block.value("XUNITS")
    xkind = _x_unit_kind(xunits)
    rec = block.get("XUNITS")
    if xkind is None:
        raise ReadError(
            f"infrared block with X units {xunits!r}; expected 1/CM (cm-1), MICROMETERS or "
            "NANOMETERS",
            path=source,
            line=rec.line if rec else block.line,
        )
    yunits = block.value("YUNITS")
    ykind = _y_unit_kind(yunits)
    if ykind is None:
        rec = block.get("YUNITS")
        raise ReadError(
            f"Y units {yunits!r} not understood; expected TRANSMITTANCE, ABSORBANCE or an "
            "absorbance-like unit (ARBITRARY UNITS, KUBELKA-MUNK, absorption coefficient)",
            path=source,
            line=rec.line if rec else block.line,
        )
    return xkind, ykind


def _transmittance_fraction(y: np.ndarray, rec: _Record, source: str | None) -> np.ndarray:
    """0..1 fraction from a fraction or percent transmittance, decided by the data."""
    top = float(np.max(y)) if y.size else 0.0
    if top <= FRACTION_MAX:
        return y
    if top >= PERCENT_MIN:
        # only percent can reach this high, however far the baseline drifts above 100 %: read
        # as percent; the quality report says how far above 100 % it went
        return y / 100.0
    raise ReadError(
        f"transmittance values reach {top:g}: too high for a 0..1 fraction, too low for a "
        "percent transmittance; cannot tell which the file means (check YUNITS and YFACTOR)",
        path=source,
        line=rec.line,
    )


def over_100_note(x: np.ndarray, t: np.ndarray) -> str:
    """The note a reader keeps when a transmittance (0..1 fraction) rises above 1, e.g.
    ``'reaches 112.1 %T at 3980 cm-1'``; :mod:`reflib.signal.quality` reports it."""
    i = int(np.argmax(t))
    return f"reaches {100.0 * float(t[i]):.1f} %T at {float(x[i]):.0f} cm-1"


def _spectrum(
    obj_x: np.ndarray, y: np.ndarray, ykind: str, meta: Metadata, line: int, source: str | None
) -> Spectrum:
    if ykind == "transmittance" and y.size and float(np.max(y)) > 1.0:
        meta.extra["transmittance_over_100"] = over_100_note(obj_x, y)
    try:
        return Spectrum(obj_x, y, ykind, meta)
    except ValidationError as exc:
        raise ReadError(f"not a usable spectrum: {exc.message}", path=source, line=line) from None


def _read_xydata(block: _Block, rec: _Record, source: str | None) -> Spectrum:
    xkind, ykind = _block_units(block, source)
    firstx = _block_number(block, "FIRSTX", source)
    lastx = _block_number(block, "LASTX", source)
    npoints = _block_number(block, "NPOINTS", source)
    xfactor = _block_number(block, "XFACTOR", source) or 1.0
    yfactor = _block_number(block, "YFACTOR", source)
    yfactor = 1.0 if yfactor is None else yfactor
    missing = [
        n for n, v in (("FIRSTX", firstx), ("LASTX", lastx), ("NPOINTS", npoints)) if v is None
    ]
    if missing:
        raise ReadError(
            f"XYDATA without ##{'=, ##'.join(missing)}=; they are required to build the abscissa",
            path=source,
            line=rec.line,
        )
    assert firstx is not None and lastx is not None and npoints is not None
    if npoints != int(npoints) or npoints < 2:
        raise ReadError(
            f"##NPOINTS={npoints:g}; expected a whole number of at least 2",
            path=source,
            line=rec.line,
        )
    n = int(npoints)
    if n > MAX_POINTS:
        raise ReadError(
            f"##NPOINTS={n}; reflib reads at most {MAX_POINTS} points", path=source, line=rec.line
        )
    decoded = _decode_xydata(rec, source, min(MAX_POINTS, 2 * n + 10), n)
    if decoded.y.size != n:
        raise ReadError(
            f"##NPOINTS={n} but the XYDATA decodes to {decoded.y.size} points",
            path=source,
            line=rec.line,
        )
    dx = (lastx - firstx) / (n - 1)
    for line, xraw, index in decoded.line_x:
        # a line's X may be one point off (writers differ on the X of a Y-check line) and is
        # rounded: half a unit of XFACTOR when written as a whole number, else 0.005 units
        slack = 0.5 if xraw == round(xraw) else 0.005
        tol = X_CHECK_SPACINGS * abs(dx) + slack * abs(xfactor)
        expected = firstx + index * dx
        got = xraw * xfactor
        if abs(got - expected) > tol:
            raise ReadError(
                f"abscissa check failed: the line starts at X={got:g} but point {index + 1} "
                f"should be at {expected:g} (FIRSTX + i*DELTAX)",
                path=source,
                line=line,
            )
    x = firstx + dx * np.arange(n)
    x[-1] = lastx
    y = decoded.y * yfactor
    if ykind == "transmittance":
        y = _transmittance_fraction(y, rec, source)
    x = _to_wavenumber(x, xkind, block, source)
    return _spectrum(x, y, ykind, _metadata(block, source), rec.line, source)


def _scaled_table(
    block: _Block, rec: _Record, ncols: int, source: str | None, holds: str
) -> tuple[np.ndarray, float, np.ndarray, np.ndarray]:
    """The (X, Y[, W]) groups of an XYPOINTS or PEAK TABLE record, checked against NPOINTS,
    and x and y scaled by XFACTOR and YFACTOR. ``holds`` words the count mismatch."""
    xfactor = _block_number(block, "XFACTOR", source) or 1.0
    yfactor = _block_number(block, "YFACTOR", source)
    yfactor = 1.0 if yfactor is None else yfactor
    arr = _groups(rec, ncols, source, MAX_POINTS)
    npoints = _block_number(block, "NPOINTS", source)
    if npoints is not None and int(npoints) != arr.shape[0]:
        raise ReadError(
            f"##NPOINTS={npoints:g} but " + holds.format(arr.shape[0]),
            path=source,
            line=rec.line,
        )
    return arr, xfactor, arr[:, 0] * xfactor, arr[:, 1] * yfactor


def _read_xypoints(block: _Block, rec: _Record, source: str | None) -> Spectrum:
    xkind, ykind = _block_units(block, source)
    _check_form(rec, ("XY",), source)
    arr, xfactor, x, y = _scaled_table(block, rec, 2, source, "##XYPOINTS= holds {} points")
    if ykind == "transmittance":
        y = _transmittance_fraction(y, rec, source)
    x = _to_wavenumber(x, xkind, block, source)
    return _spectrum(x, y, ykind, _metadata(block, source), rec.line, source)


def _check_form(rec: _Record, forms: tuple[str, ...], source: str | None) -> str:
    m = re.match(r"\(\s*([A-Z]+)\s*\.\.\s*([A-Z]+)\s*\)", rec.value.strip(), re.I)
    form = m.group(1).upper() if m and m.group(1).upper() == m.group(2).upper() else None
    if form not in forms:
        wanted = " or ".join(f"({f}..{f})" for f in forms)
        raise ReadError(
            f"##{rec.raw_label}={rec.value.strip()[:30]} not supported; expected {wanted}",
            path=source,
            line=rec.line,
        )
    return form


def _peak_words(text: str, n: int, rec: _Record | None, source: str | None):
    words = text.split()
    line = rec.line if rec else None
    if len(words) != n:
        raise ReadError(
            f"##$REFLIB PEAK WORDS= has {len(words)} entries for {n} peaks", path=source, line=line
        )
    strengths, broad, shoulder = [], [], []
    for w in words:
        parts = w.split("/")
        strengths.append(parts[0])
        flags = set(parts[1:])
        if not flags <= {"br", "sh"}:
            raise ReadError(
                f"peak word {w!r}: expected a strength word with optional /br and /sh",
                path=source,
                line=line,
            )
        broad.append("br" in flags)
        shoulder.append("sh" in flags)
    return strengths, np.array(broad), np.array(shoulder)


def _read_peak_table(block: _Block, rec: _Record, source: str | None) -> PeakList:
    xkind, ykind = _block_units(block, source)
    form = _check_form(rec, ("XY", "XYW"), source)
    arr, xfactor, x, y = _scaled_table(
        block, rec, len(form), source, "the peak table holds {} peaks"
    )
    if form == "XYW":
        w = arr[:, 2] * xfactor
        if np.any(w < 0):
            raise ReadError("negative peak width in the peak table", path=source, line=rec.line)
        w = np.where(w == 0, np.nan, w)  # a zero width means "not given"
    else:
        w = np.full(x.size, np.nan)
    if ykind == "transmittance":
        t = _transmittance_fraction(y, rec, source)
        y = -np.log10(np.clip(t, 1e-4, None))
    if np.any(y < 0):
        raise ReadError(
            "negative peak intensity; expected absorbance-like intensities of 0 or more "
            "(or transmittance below 1)",
            path=source,
            line=rec.line,
        )
    if xkind != "cm-1":
        if np.any(x <= 0):
            raise ReadError("peak wavelengths must be positive", path=source, line=rec.line)
        factor = 1.0e4 if xkind == "um" else 1.0e7
        w = w * factor / x**2  # d(nu) = factor / lambda^2 d(lambda)
        x = factor / x
    top = float(y.max()) if y.size else 0.0
    rel = y / top if top > 0 else y
    meta = _metadata(block, source)
    words = block.get("$REFLIBPEAKWORDS")
    strengths = broad = shoulder = None
    if words is not None:
        strengths, broad, shoulder = _peak_words(words.text(), x.size, words, source)
    try:
        return PeakList(x, rel, w, strengths, broad, shoulder, meta)
    except ValidationError as exc:
        raise ReadError(
            f"not a usable peak list: {exc.message}", path=source, line=rec.line
        ) from None


def _read_block(block: _Block, source: str | None) -> Readable:
    rec = block.data_record()
    if rec is None:
        if block.get("NTUPLES") is not None:
            where = block.get("NTUPLES")
            raise ReadError(
                "infrared data in NTUPLES form is not supported; export it as ##XYDATA= "
                "or ##XYPOINTS=",
                path=source,
                line=where.line if where else block.line,
            )
        raise ReadError(
            "infrared block holds no ##XYDATA=, ##XYPOINTS= or ##PEAK TABLE=",
            path=source,
            line=block.line,
        )
    if rec.label == "XYDATA":
        return _read_xydata(block, rec, source)
    if rec.label == "XYPOINTS":
        return _read_xypoints(block, rec, source)
    return _read_peak_table(block, rec, source)


def xydata_ordinates(text: str, *, source: str | None = None) -> list[np.ndarray]:
    """The ordinates (times YFACTOR) of every ``##XYDATA=`` record, whatever its data type.

    No units are interpreted and no abscissa is built; the Y checks and the NPOINTS count are
    applied. Meant for checking ASDF decoding on any JCAMP-DX file (NMR files included).

    >>> xydata_ordinates("##TITLE=t\\n##NPOINTS=4\\n##XYDATA=(X++(Y..Y))\\n1 AJT%\\n##END=")
    [array([1., 2., 3., 3.])]
    """
    out: list[np.ndarray] = []
    for block in _leaves(_blocks(_records(text, source), source)):
        rec = block.get("XYDATA")
        if rec is None:
            continue
        npoints = _block_number(block, "NPOINTS", source)
        if npoints is None or npoints != int(npoints) or not 0 < npoints <= MAX_POINTS:
            raise ReadError("XYDATA needs ##NPOINTS= (a whole number)", path=source, line=rec.line)
        n = int(npoints)
        decoded = _decode_xydata(rec, source, min(MAX_POINTS, 2 * n + 10), n)
        if decoded.y.size != n:
            raise ReadError(
                f"##NPOINTS={n} but the XYDATA decodes to {decoded.y.size} points",
                path=source,
                line=rec.line,
            )
        yfactor = _block_number(block, "YFACTOR", source)
        out.append(decoded.y * (1.0 if yfactor is None else yfactor))
    return out


def parse_jcamp(text: str, *, source: str | None = None) -> list[Readable]:
    """Every infrared spectrum or peak table in JCAMP-DX text, in file order.

    Reads plain files and compound (LINK) files; non-infrared blocks inside a LINK file are
    skipped. Abscissae become cm-1 (from 1/CM, MICROMETERS, or NANOMETERS in an infrared block),
    ordinates absorbance or 0..1 transmittance; ``meta.y_units`` keeps the unit as written.

    Raises :class:`~reflib.errors.ReadError` (with ``line`` where known) for anything that is not
    a readable infrared JCAMP-DX file, naming the data type when it is another technique.

    >>> parse_jcamp("##TITLE=x\\n##DATA TYPE=MASS SPECTRUM\\n##PEAK TABLE=(XY..XY)\\n1,2\\n##END=")
    Traceback (most recent call last):
    ...
    reflib.errors.ReadError: this is a MASS SPECTRUM file, not infrared
    """
    if not isinstance(text, str):
        raise ReadError("expected text", path=source)
    sample = text[:100000]
    controls = sum(1 for c in sample if ord(c) < 32 and c not in "\t\n\r\f\x1a")
    if "\x00" in sample or controls > max(10, len(sample) // 100):
        raise ReadError("binary data, not JCAMP-DX text", path=source)
    text = text.replace("\x1a", "")  # DOS end-of-file mark
    blocks = _blocks(_records(text, source), source)
    if not blocks:
        raise ReadError("no JCAMP-DX labelled records (##LABEL=value) found", path=source)
    results: list[Readable] = []
    others: list[str] = []
    for block in _leaves(blocks):
        if block.data_type == "LINK":
            continue
        if not block.has_any_data():
            if _is_infrared(block) and not block.children:
                _read_block(block, source)  # raises: an infrared header without data
            elif block.get("JCAMPCS") is not None and not block.children:
                others.append("CHEMICAL STRUCTURE")
            continue
        if _is_infrared(block):
            # absurd factors (XFACTOR=-1e308) overflow to inf, which the Spectrum/PeakList
            # checks then refuse as one clear error; numpy must not print warnings first
            with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
                results.append(_read_block(block, source))
        else:
            name = _type_name(block)
            if name not in others:
                others.append(name)
    if not results:
        if others:
            what = ", ".join(others)
            article = "an" if what[:1] in "AEIOU" and not what.startswith("U") else "a"
            if len(others) == 1 and not what.startswith("data "):
                raise ReadError(f"this is {article} {what} file, not infrared", path=source)
            raise ReadError(f"this file holds {what} data, not infrared", path=source)
        raise ReadError("no ##XYDATA=, ##XYPOINTS= or ##PEAK TABLE= data found", path=source)
    return results


# ----------------------------------------------------------------------------------------------
# Writing
# ----------------------------------------------------------------------------------------------


def _fmt(value: float, digits: int = 17) -> str:
    text = f"{value:.{digits}g}"
    return "0" if text == "-0" else text


def _sqz(value: int) -> str:
    digits = str(abs(value))
    first = int(digits[0])
    char = "@ABCDEFGHI"[first] if value >= 0 else " abcdefghi"[first]
    return char + digits[1:]


def _dif(value: int) -> str:
    digits = str(abs(value))
    first = int(digits[0])
    char = "%JKLMNOPQR"[first] if value >= 0 else " jklmnopqr"[first]
    return char + digits[1:]


def _dup(count: int) -> str:
    digits = str(count)
    return "STUVWXYZs"[int(digits[0]) - 1] + digits[1:]


def _clean_value(text: str) -> str:
    """A value safe to write: no comment marks, no line starting a new label."""
    text = text.replace("$$", "$ $")
    lines = [ln.rstrip() for ln in text.splitlines()] or [""]
    out = [lines[0]]
    for ln in lines[1:]:
        out.append("# #" + ln.lstrip()[2:] if ln.lstrip().startswith("##") else ln)
    return "\n".join(out)


def _header(obj: Readable, data_type: str, data_class: str) -> list[str]:
    meta = obj.meta
    title = " ".join((meta.title or "untitled").split())
    lines = [
        f"##TITLE={_clean_value(title)}",
        "##JCAMP-DX=5.01",
        f"##DATA TYPE={data_type}",
        f"##DATA CLASS={data_class}",
        f"##ORIGIN={_clean_value(meta.origin or '')}",
        f"##OWNER={_clean_value(meta.owner or '')}",
    ]
    if meta.resolution is not None:
        lines.append(f"##RESOLUTION={_fmt(meta.resolution)}")
    if meta.state:
        lines.append(f"##STATE={_clean_value(meta.state)}")
    if meta.sampling_procedure:
        lines.append(f"##SAMPLING PROCEDURE={_clean_value(meta.sampling_procedure)}")
    lines.append(f"##$REFLIB PREP={' '.join(meta.prep)}")
    for key, value in meta.extra.items():
        key = " ".join(str(key).split())
        if not key or "=" in key or normalise_label(key) in _OWN_LABELS:
            continue
        lines.append(f"##{key}={_clean_value(str(value))}")
    return lines


def _evenly_spaced(x: np.ndarray) -> bool:
    n = x.size
    dx = (x[-1] - x[0]) / (n - 1)
    grid = x[0] + dx * np.arange(n)
    return bool(np.max(np.abs(x - grid)) <= 1e-6 * abs(dx))


def _affn_lines(x: np.ndarray, y: np.ndarray) -> list[str]:
    out: list[str] = []
    i, n = 0, y.size
    while i < n:
        line = _fmt(x[i], 10)
        j = i
        while j < n:
            token = " " + _fmt(y[j], AFFN_DIGITS)
            if j > i and len(line) + len(token) > LINE_LENGTH:
                break
            line += token
            j += 1
        out.append(line)
        i = j
    return out


def _difdup_lines(x: np.ndarray, iy: list[int]) -> list[str]:
    out: list[str] = []
    n = len(iy)
    i = 0
    while True:
        line = _fmt(x[i], 10) + _sqz(iy[i])
        j = i  # last point on this line
        while j < n - 1:
            d = iy[j + 1] - iy[j]
            run = 1
            while j + run < n - 1 and iy[j + run + 1] - iy[j + run] == d:
                run += 1
            token = _dif(d) + (_dup(run) if run > 1 else "")
            while len(line) + len(token) > LINE_LENGTH and run > 1:
                run -= 1
                token = _dif(d) + (_dup(run) if run > 1 else "")
            if len(line) + len(token) > LINE_LENGTH:
                break
            line += token
            j += run
        out.append(line)
        if j == n - 1:
            if j > i:  # the line ended in DIF form: repeat the last value as the Y check
                out.append(_fmt(x[j], 10) + _sqz(iy[j]))
            return out
        i = j


def _write_spectrum(spec: Spectrum, compression: str) -> str:
    x, y = spec.x, spec.y
    n = x.size
    yunits = "ABSORBANCE" if spec.y_kind == "absorbance" else "TRANSMITTANCE"
    even = _evenly_spaced(x)
    lines = _header(spec, "INFRARED SPECTRUM", "XYDATA" if even else "XYPOINTS")
    lines += ["##XUNITS=1/CM", f"##YUNITS={yunits}", "##XFACTOR=1"]
    if not even:
        lines += [
            "##YFACTOR=1",
            f"##FIRSTX={_fmt(x[0])}",
            f"##LASTX={_fmt(x[-1])}",
            f"##NPOINTS={n}",
            "##XYPOINTS=(XY..XY)",
        ]
        lines += [f"{_fmt(a, 12)}, {_fmt(b, AFFN_DIGITS)}" for a, b in zip(x, y)]
        lines.append("##END=")
        return "\n".join(lines) + "\n"
    if compression == "affn":
        yfactor = 1.0
    else:
        top = float(np.max(np.abs(y)))
        yfactor = float(_fmt(top / DIF_SCALE)) if top > 0 else 1.0
    lines += [
        f"##YFACTOR={_fmt(yfactor)}",
        f"##FIRSTX={_fmt(x[0])}",
        f"##LASTX={_fmt(x[-1])}",
        f"##DELTAX={_fmt((x[-1] - x[0]) / (n - 1))}",
        f"##NPOINTS={n}",
        f"##FIRSTY={_fmt(y[0], AFFN_DIGITS)}",
        f"##MAXY={_fmt(float(y.max()), AFFN_DIGITS)}",
        f"##MINY={_fmt(float(y.min()), AFFN_DIGITS)}",
        "##XYDATA=(X++(Y..Y))",
    ]
    if compression == "affn":
        lines += _affn_lines(x, y)
    else:
        iy = [int(v) for v in np.rint(y / yfactor)]
        lines += _difdup_lines(x, iy)
    lines.append("##END=")
    return "\n".join(lines) + "\n"


def _write_peaks(peaks: PeakList) -> str:
    lines = _header(peaks, "INFRARED PEAK TABLE", "PEAK TABLE")
    words = []
    for p in peaks:
        w = p.strength + ("/br" if p.broad else "") + ("/sh" if p.shoulder else "")
        words.append(w)
    lines += [
        "##XUNITS=1/CM",
        "##YUNITS=ARBITRARY UNITS",
        "##XFACTOR=1",
        "##YFACTOR=1",
        f"##NPOINTS={len(peaks)}",
        f"##$REFLIB PEAK WORDS={' '.join(words)}",
    ]
    if peaks.labels is not None and any(peaks.labels):
        lines.append("##$REFLIB PEAK LABELS=(XA)")
        for p in peaks:
            if p.label:
                label = _clean_value(p.label.replace("<", "(").replace(">", ")"))
                lines.append(f"({_fmt(p.position, 10)},<{label}>)")
    lines.append("##PEAK TABLE=(XYW..XYW)")
    row = ""
    for p in peaks:
        width = 0.0 if math.isnan(p.width) else p.width
        group = (
            f"{_fmt(p.position, 10)},{_fmt(p.intensity, AFFN_DIGITS)},{_fmt(width, AFFN_DIGITS)}"
        )
        if row and len(row) + 1 + len(group) > LINE_LENGTH:
            lines.append(row)
            row = ""
        row = f"{row} {group}" if row else group
    if row:
        lines.append(row)
    lines.append("##END=")
    return "\n".join(lines) + "\n"


def write_jcamp(obj: Readable, *, compression: str = "affn") -> str:
    """JCAMP-DX 5.01 text of a spectrum or peak list.

    A spectrum on an evenly spaced axis is written as ``##XYDATA=(X++(Y..Y))`` in cm-1,
    ascending: ``compression="affn"`` writes plain numbers to 7 significant digits;
    ``"difdup"`` writes ASDF DIF/DUP with a Y check at the start of every following line and
    ``YFACTOR = max|y| / 1e6`` (so each ordinate is kept to within 5e-7 of the largest |y|).
    An unevenly spaced axis is written as ``##XYPOINTS=(XY..XY)`` (AFFN, 12 digits for x) in
    either case. A peak list is written as ``##PEAK TABLE=(XYW..XYW)`` (width 0 = not known) with
    strength words and broad/shoulder flags in ``##$REFLIB PEAK WORDS=``, the author's band
    labels (when there are any) in ``##$REFLIB PEAK LABELS=(XA)``, one ``(position,<label>)``
    per line, and preparation tokens in ``##$REFLIB PREP=``.

    >>> print(write_jcamp(PeakList([1715.0], [1.0], [12.0])).splitlines()[-2])
    1715,1,12
    """
    if compression not in ("affn", "difdup"):
        raise ValidationError(f"compression must be 'affn' or 'difdup', got {compression!r}")
    if isinstance(obj, Spectrum):
        return _write_spectrum(obj, compression)
    if isinstance(obj, PeakList):
        return _write_peaks(obj)
    raise ValidationError(f"write_jcamp needs a Spectrum or PeakList, got {type(obj).__name__}")


__all__ = [
    "parse_jcamp",
    "write_jcamp",
    "xydata_ordinates",
    "normalise_label",
    "preparation_tokens",
    "MAX_POINTS",
]
