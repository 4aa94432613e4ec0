"""reflib.io dispatch: the content of a file, never its name, picks the reader.

JCAMP-DX is recognised by its labelled records ``##LABEL=`` (JCAMP-DX specification, from
memory); only sniff_format is used for it here, the JCAMP-DX reader has its own tests.
"""

from __future__ import annotations

import hashlib

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from reflib.errors import ReadError
from reflib.io import read_all, read_spectrum, sniff_format
from reflib.io.delimited import write_delimited
from reflib.io.peaktext import parse_peak_text
from reflib.spectrum import STRENGTH_WORDS, PeakList, Spectrum

JCAMP_HEAD = "##TITLE=crude 42\n##JCAMP-DX=4.24\n##DATA TYPE=INFRARED SPECTRUM\n"
X = np.arange(4000.0, 399.0, -4.0)
A = 0.02 + 0.8 * np.exp(-0.5 * ((X - 1715.0) / 10.0) ** 2)


def _csv(x=X, y=A, header="wavenumber (cm-1),absorbance"):
    return header + "\n" + "\n".join(f"{a:.1f},{b:.5f}" for a, b in zip(x, y, strict=True))


@pytest.mark.parametrize(
    "text, fmt",
    [
        (JCAMP_HEAD + "##XYDATA=(X++(Y..Y))\n4000 0.1 0.2\n##END=\n", "jcamp"),
        ("  ##TITLE= indented label\n##END=", "jcamp"),
        ("3350 (br), 2935 (s), 1715 (vs), 1240 cm-1", "peaktext"),
        ("IR (film): 3350 br, 1715 s cm⁻¹", "peaktext"),
        ("νmax (KBr)/cm-1 3350, 1715", "peaktext"),
        (_csv(), "delimited"),
        (_csv(header="Wavenumber (cm-1),%T (film, 4 cm-1)"), "delimited"),
        (_csv().replace(",", ";").replace(".", ","), "delimited"),
        (_csv(header="").replace(",", "\t"), "delimited"),
    ],
)
def test_sniff_format(text, fmt):
    assert sniff_format(text) == fmt


def test_a_comment_mentioning_jcamp_is_not_jcamp():
    text = "# converted from a ## file\n" + _csv()
    assert sniff_format(text) == "delimited"


def test_read_spectrum_csv_file_stamps_name_and_hash(tmp_path):
    path = tmp_path / "crude-42.csv"
    path.write_text(_csv(), encoding="utf-8")
    s = read_spectrum(path)
    assert isinstance(s, Spectrum) and s.y_kind == "absorbance"
    assert s.meta.source_file == "crude-42.csv"
    assert s.meta.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()


def test_read_spectrum_typed_list_file(tmp_path):
    path = tmp_path / "notebook p.112.txt"
    path.write_text("IR (CHCl3): 3020 (w), 1715 (vs), 1215 (m) cm-1\n", encoding="utf-8")
    pl = read_spectrum(path)
    assert isinstance(pl, PeakList)
    assert pl.positions.tolist() == [1215.0, 1715.0, 3020.0]
    assert pl.meta.prep == ["chcl3"] and pl.meta.source_file == path.name


def test_the_name_does_not_decide(tmp_path):
    path = tmp_path / "mislabelled.jdx"
    path.write_text(_csv(), encoding="utf-8")
    assert isinstance(read_spectrum(path), Spectrum)


def test_y_kind_option_reaches_the_delimited_reader(tmp_path):
    path = tmp_path / "ambiguous.dat"
    y = np.linspace(0.05, 0.95, X.size)  # no baseline side: reflib refuses to guess
    path.write_text("\n".join(f"{a:.1f} {b:.4f}" for a, b in zip(X, y, strict=True)))
    with pytest.raises(ReadError, match="--y-kind"):
        read_spectrum(path)
    assert read_spectrum(path, y_kind="transmittance").y_kind == "transmittance"


def test_errors_name_the_file_and_line(tmp_path):
    path = tmp_path / "bad.csv"
    lines = _csv().splitlines()
    lines[5] = "3984.0;0.1"
    path.write_text("\n".join(lines))
    with pytest.raises(ReadError) as err:
        read_all(path)
    assert err.value.path == str(path) and err.value.line == 6
    path2 = tmp_path / "bad.txt"
    path2.write_text("3350 (br)\n17150 (s)\n")
    with pytest.raises(ReadError) as err:
        read_spectrum(path2)
    assert err.value.path == str(path2) and err.value.line == 2


def test_latin1_and_bom_encoded_exports(tmp_path):
    """Windows instrument software writes latin-1 or UTF-8 with a byte-order mark (common
    practice, no source)."""
    text = "Messung: Lösung in CHCl3\n" + _csv(header="Wellenzahl (cm-1);Absorbance").replace(
        ",", ";"
    )
    p1 = tmp_path / "latin1.csv"
    p1.write_bytes(text.encode("latin-1"))
    p2 = tmp_path / "bom.csv"
    p2.write_bytes(text.encode("utf-8-sig"))
    for p in (p1, p2):
        s = read_spectrum(p)
        assert s.y_kind == "absorbance" and s.x.size == X.size
        assert "Lösung" in s.meta.extra["header"]


@pytest.mark.parametrize(
    "setup, fragment",
    [
        (lambda p: None, "no such file"),
        (lambda p: p.write_text("  \n"), "empty"),
        (lambda p: p.write_bytes(b"\x00\x01\x02binary"), "binary"),
    ],
)
def test_unreadable_files(tmp_path, setup, fragment):
    path = tmp_path / "x.csv"
    setup(path)
    with pytest.raises(ReadError, match=fragment):
        read_spectrum(path)


@settings(max_examples=50, deadline=None)
@given(st.integers(10, 400), st.floats(0.5, 8.0), st.sampled_from([",", ";", "\t", " "]))
def test_written_spectra_always_sniff_as_delimited(n, step, sep):
    x = 400.0 + step * np.arange(n)
    s = Spectrum(x, 0.1 + 0.05 * np.sin(x / 50.0), "absorbance")
    assert sniff_format(write_delimited(s, sep=sep)) == "delimited"


@st.composite
def _peak_lists(draw):
    positions = draw(st.lists(st.integers(100, 5000), min_size=1, max_size=25, unique=True))
    n = len(positions)
    words = draw(st.lists(st.sampled_from(list(STRENGTH_WORDS)), min_size=n, max_size=n))
    broad = draw(st.lists(st.booleans(), min_size=n, max_size=n))
    shoulder = draw(st.lists(st.booleans(), min_size=n, max_size=n))
    return PeakList(
        np.array(positions, float),
        np.array([STRENGTH_WORDS[w][1] for w in words]),
        strengths=words,
        broad=np.array(broad),
        shoulder=np.array(shoulder),
    )


@settings(max_examples=80, deadline=None)
@given(_peak_lists())
def test_peak_list_text_sniffs_as_peaktext_and_reads_back(pl):
    text = pl.to_text()
    assert sniff_format(text) == "peaktext"
    back = parse_peak_text(text)
    assert back.positions.tolist() == pl.positions.tolist()
    assert back.strengths == pl.strengths
    assert back.broad.tolist() == pl.broad.tolist()
    assert back.shoulder.tolist() == pl.shoulder.tolist()


def test_a_jcamp_name_without_jcamp_content_says_so(tmp_path):
    """A file named .jdx that holds neither JCAMP-DX labels (##LABEL=, JCAMP-DX specification,
    from memory) nor readable columns: the error says it is not JCAMP-DX."""
    path = tmp_path / "truncated.jdx"
    path.write_text("garbage\n", encoding="utf-8")
    with pytest.raises(ReadError, match=r"ends in \.jdx, but the file holds no JCAMP-DX labels"):
        read_spectrum(path)
    other = tmp_path / "garbage.csv"
    other.write_text("garbage\n", encoding="utf-8")
    with pytest.raises(ReadError) as err:
        read_spectrum(other)
    assert "JCAMP-DX" not in str(err.value)
