"""JCAMP-DX reader and writer (reflib.io.jcamp): the standard's rules on small texts, round trips.

Sources: the ASDF character tables, the DIF Y-check rule, label normalisation and block
structure are the JCAMP-DX standard's (JCAMP-DX 4.24 for infrared, McDonald & Wilks 1988;
JCAMP-DX 5.01), written here from memory. The "1 2 3 3 2 1 0 -1 -2 -3" series in every form is
the worked example of that paper, also from memory. Checks against the published test files are
in tests/outside/test_jcamp_reference.py.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from reflib.errors import ReadError, ReflibError
from reflib.io.jcamp import (
    LINE_LENGTH,
    normalise_label,
    parse_jcamp,
    preparation_tokens,
    write_jcamp,
    xydata_ordinates,
)
from reflib.spectrum import Metadata, PeakList, Spectrum


def jdx(*lines: str, xunits: str = "1/CM", yunits: str = "ABSORBANCE", extra: str = "") -> str:
    """A small infrared XYDATA file around the given data lines (FIRSTX 1000, DELTAX 1)."""
    head = [
        "##TITLE=test",
        "##JCAMP-DX=4.24",
        "##DATA TYPE=INFRARED SPECTRUM",
        f"##XUNITS={xunits}",
        f"##YUNITS={yunits}",
    ]
    if extra:
        head.append(extra)
    return "\n".join(head + list(lines) + ["##END="]) + "\n"


def xy(npoints: int, data: list[str], yfactor: float = 1.0, **kw) -> str:
    return jdx(
        "##XFACTOR=1",
        f"##YFACTOR={yfactor}",
        "##FIRSTX=1000",
        f"##LASTX={1000 + npoints - 1}",
        f"##NPOINTS={npoints}",
        "##XYDATA=(X++(Y..Y))",
        *data,
        **kw,
    )


SERIES = [1, 2, 3, 3, 2, 1, 0, -1, -2, -3]


@pytest.mark.parametrize(
    "line",
    [
        "1000 1 2 3 3 2 1 0 -1 -2 -3",  # AFFN
        "1000 1+2+3+3+2+1+0-1-2-3",  # PAC
        "1000 ABCCBA@abc",  # SQZ
        "1000 AJJ%jjjjjj",  # DIF
        "1000 AJT%jX",  # DIF with DUP
        "1000 ABCTBA@abc",  # SQZ with DUP
        "1000 A J K,3 j B a@",  # forms mixed on one line, comma separator
    ],
)
def test_every_asdf_form_decodes_the_standard_example(line):
    """The worked example of the JCAMP-DX paper (McDonald & Wilks 1988), from memory."""
    if "K,3" in line:  # A=1, J=+1 -> 2, K=+2 -> 4, 3, j -> 2, B=2, a=-1, @=0 (hand-decoded)
        want = [1, 2, 4, 3, 2, 2, -1, 0]
        text = xy(len(want), [line])
    else:
        want = SERIES
        text = xy(10, [line])
    spec = parse_jcamp(text)[0]
    assert spec.y.tolist() == want
    assert spec.x.tolist() == [1000.0 + i for i in range(len(want))]


def test_multi_digit_sqz_dif_dup():
    """Further digits follow the first character: B1399 = 21399, j05 = -105, S1 = 11 in all."""
    text = xy(15, ["1000 B1399TJj05", "1003 B1295%S1"])
    spec = parse_jcamp(text)[0]
    assert spec.y.tolist() == [21399, 21399, 21400, 21295] + [21295] * 11


def test_y_check_value_is_dropped():
    """JCAMP-DX: after a line ending in DIF form, the next line repeats the last ordinate."""
    text = xy(6, ["1000 A J J", "1002 C J J", "1004 E J", "1005 F"])
    assert parse_jcamp(text)[0].y.tolist() == [1, 2, 3, 4, 5, 6]


def test_y_check_mismatch_is_an_error_with_line_number():
    text = xy(6, ["1000 AJJ", "1002 DJJ", "1004 FJ"])
    with pytest.raises(ReadError, match="Y check failed") as err:
        parse_jcamp(text)
    assert err.value.line == text.splitlines().index("1002 DJJ") + 1


def test_no_y_check_after_a_line_ending_in_absolute_form():
    """A line ending in SQZ/AFFN form is not followed by a check value: nothing is dropped."""
    text = xy(6, ["1000 A B C", "1003 D E F"])
    assert parse_jcamp(text)[0].y.tolist() == [1, 2, 3, 4, 5, 6]


def test_abscissa_check_catches_a_wrong_line_x():
    text = xy(6, ["1000 1 2 3", "1010 4 5 6"])
    with pytest.raises(ReadError, match="abscissa check") as err:
        parse_jcamp(text)
    assert err.value.line == text.splitlines().index("1010 4 5 6") + 1


def test_abscissa_check_allows_one_point_of_slack():
    """Writers differ on the X of a Y-check line by one point; that is not an error."""
    text = xy(6, ["1000 AJJ", "1003 CJJ", "1005 EJ"])
    assert parse_jcamp(text)[0].y.tolist() == [1, 2, 3, 4, 5, 6]


def test_npoints_mismatch_says_what_was_found():
    with pytest.raises(ReadError, match="NPOINTS=7 but the XYDATA decodes to 6"):
        parse_jcamp(xy(7, ["1000 1 2 3 4 5 6"]).replace("##LASTX=1006", "##LASTX=1006"))


def test_x_is_built_from_firstx_lastx_npoints_not_line_abscissae():
    text = jdx(
        "##FIRSTX=400.25",
        "##LASTX=403.25",
        "##NPOINTS=4",
        "##XFACTOR=1",
        "##YFACTOR=0.5",
        "##XYDATA=(X++(Y..Y))",
        "400 1 2 3 4",
    )
    spec = parse_jcamp(text)[0]
    np.testing.assert_allclose(spec.x, [400.25, 401.25, 402.25, 403.25])
    assert spec.y.tolist() == [0.5, 1.0, 1.5, 2.0]


def test_xfactor_scales_line_abscissae():
    text = jdx(
        "##FIRSTX=1000",
        "##LASTX=1003",
        "##NPOINTS=4",
        "##XFACTOR=0.5",
        "##XYDATA=(X++(Y..Y))",
        "2000 1 2",
        "2004 3 4",
    )
    assert parse_jcamp(text)[0].y.tolist() == [1, 2, 3, 4]


@pytest.mark.parametrize("label", ["##X UNITS=", "##xunits=", "##X_UNITS=", "##X-Units="])
def test_label_normalisation(label):
    """JCAMP-DX: labels compare without case, spaces, dashes, slashes or underscores."""
    text = xy(3, ["1000 1 2 3"]).replace("##XUNITS=", label)
    assert parse_jcamp(text)[0].x.tolist() == [1000.0, 1001.0, 1002.0]
    assert normalise_label("Sampling_Procedure") == normalise_label("SAMPLING PROCEDURE")


def test_comments_and_continuation_lines():
    text = xy(
        3,
        ["1000 1 2 3 $$ a comment on a data line"],
        extra="##$NOTE=x $$ comment\n$$ whole-line comment",
    ).replace("##TITLE=test\n", "##TITLE=benzoic acid $$ comment\n  nujol mull\n")
    spec = parse_jcamp(text)[0]
    assert spec.meta.title == "benzoic acid\nnujol mull"
    assert spec.meta.prep == ["nujol"]
    assert spec.y.tolist() == [1, 2, 3]
    assert spec.meta.extra["$NOTE"] == "x"


def test_dos_mac_line_ends_and_eof_mark():
    text = xy(3, ["1000 1 2 3"])
    for variant in (text.replace("\n", "\r\n") + "\x1a", text.replace("\n", "\r")):
        assert parse_jcamp(variant)[0].y.tolist() == [1, 2, 3]


def test_micrometres_become_wavenumbers():
    text = jdx(
        "##FIRSTX=2.5",
        "##LASTX=5.0",
        "##NPOINTS=2",
        "##XYDATA=(X++(Y..Y))",
        "2.5 0.1 0.2",
        xunits="MICROMETERS",
    )
    spec = parse_jcamp(text)[0]
    assert spec.x.tolist() == [2000.0, 4000.0]  # 1e4/5 and 1e4/2.5, reordered ascending
    assert spec.y.tolist() == [0.2, 0.1]


def test_nanometres_in_an_infrared_block_are_near_infrared():
    text = jdx(
        "##FIRSTX=1000",
        "##LASTX=2000",
        "##NPOINTS=2",
        "##XYDATA=(X++(Y..Y))",
        "1000 0.1 0.2",
        xunits="NANOMETERS",
    )
    assert parse_jcamp(text)[0].x.tolist() == [5000.0, 10000.0]


@pytest.mark.parametrize("units", ["cm-1", "CM^-1", "1/cm", "1/CM"])
def test_wavenumber_unit_spellings(units):
    assert parse_jcamp(xy(2, ["1000 1 2"], xunits=units))[0].x[0] == 1000.0


def test_infrared_block_with_hertz_is_refused():
    with pytest.raises(ReadError, match="X units 'HZ'"):
        parse_jcamp(xy(2, ["1000 1 2"], xunits="HZ"))


def test_percent_and_fraction_transmittance_by_data():
    """Percent (0..100) and fraction (0..1) transmittance are told apart by the values."""
    frac = parse_jcamp(xy(3, ["1000 0.5 1.02 0.2"], yunits="TRANSMITTANCE"))[0]
    pct = parse_jcamp(xy(3, ["1000 50 102 20"], yunits="% TRANSMITTANCE"))[0]
    np.testing.assert_allclose(frac.y, [0.5, 1.02, 0.2])
    np.testing.assert_allclose(pct.y, [0.5, 1.02, 0.2])
    assert pct.y_kind == "transmittance" and pct.meta.y_units == "% TRANSMITTANCE"


def test_transmittance_that_is_neither_fraction_nor_percent_is_refused():
    with pytest.raises(ReadError, match="transmittance values reach"):
        parse_jcamp(xy(2, ["1000 1 5"], yunits="TRANSMITTANCE"))


@pytest.mark.parametrize("top", ["112.07", "150", "400"])
def test_transmittance_far_above_100_is_percent_with_a_note(top):
    """Only percent reaches above 10: a baseline drifting above 100 % is read as percent
    and the drift is kept in the metadata for the quality report (issue 12)."""
    spec = parse_jcamp(xy(3, [f"1000 50 {top} 20"], yunits="TRANSMITTANCE"))[0]
    assert spec.y.max() == pytest.approx(float(top) / 100)
    assert spec.meta.extra["transmittance_over_100"].startswith(f"reaches {float(top):.1f} %T")


@pytest.mark.parametrize(
    "units",
    ["(micromol/mol)-1m-1 (base 10)", "ARBITRARY UNITS", "KUBELKA-MUNK", "ABSORBANCE"],
)
def test_absorbance_like_units(units):
    spec = parse_jcamp(xy(2, ["1000 1 2"], yunits=units))[0]
    assert spec.y_kind == "absorbance" and spec.meta.y_units == units


def test_unknown_y_units_are_refused():
    with pytest.raises(ReadError, match="Y units 'COUNTS'"):
        parse_jcamp(xy(2, ["1000 1 2"], yunits="COUNTS"))


@pytest.mark.parametrize("value", ["4", "4 cm-1", "4.0 CM-1", " 4.00"])
def test_resolution_forms(value):
    spec = parse_jcamp(xy(2, ["1000 1 2"], extra=f"##RESOLUTION={value}"))[0]
    assert spec.meta.resolution == 4.0


def test_metadata_fields_and_extra_labels():
    extra = "\n".join(
        [
            "##ORIGIN=Lab 3",
            "##OWNER=J. Doe",
            "##STATE=solid",
            "##SAMPLING PROCEDURE=KBr pellet",
            "##SPECTROMETER/DATA SYSTEM=FTIR 2",
            "##$PRIVATE THING=kept",
        ]
    )
    meta = parse_jcamp(xy(2, ["1000 1 2"], extra=extra))[0].meta
    assert (meta.origin, meta.owner, meta.state) == ("Lab 3", "J. Doe", "solid")
    assert meta.sampling_procedure == "KBr pellet"
    assert meta.data_type == "INFRARED SPECTRUM"
    assert meta.extra["SPECTROMETER/DATA SYSTEM"] == "FTIR 2"
    assert meta.extra["$PRIVATE THING"] == "kept"
    assert "XFACTOR" not in meta.extra and "NPOINTS" not in meta.extra
    assert meta.prep == ["kbr"]


@pytest.mark.parametrize(
    "texts, tokens",
    [
        (("Nujol mull",), ["nujol"]),
        (("mull in mineral oil",), ["nujol"]),
        (("KBr disc",), ["kbr"]),
        (("diamond ATR",), ["atr"]),
        (("liquid film between NaCl plates",), ["film"]),
        (("neat",), ["neat"]),
        (("5% in CCl4",), ["ccl4"]),
        (("CDCl3 solution",), ["cdcl3"]),
        (("solution in dichloromethane",), ["ch2cl2"]),
        (("0.1 M in CS2",), ["cs2"]),
        (("in CHCl3",), ["chcl3"]),
        (("gas phase, 10 cm cell",), ["gas"]),
        # conservative: a compound's name or an instrument part is not a preparation
        (("chloroform",), []),
        (("KBr beam splitter",), []),
        (("carbon disulfide",), []),
        (("TRANSMISSION",), []),
        (("catrate",), []),
    ],
)
def test_preparation_words(texts, tokens):
    """Preparation words as chemists write them (common practice, no source)."""
    assert preparation_tokens(*texts) == tokens


def test_gas_state_gives_gas_token():
    spec = parse_jcamp(xy(2, ["1000 1 2"], extra="##STATE=GAS (150 mmHg, N2 ADDED)"))[0]
    assert spec.meta.prep == ["gas"]


def test_xypoints():
    text = jdx(
        "##XFACTOR=1",
        "##YFACTOR=0.001",
        "##NPOINTS=3",
        "##XYPOINTS=(XY..XY)",
        "1100.5, 100; 1050, 200;",
        "1000, 300",
    )
    spec = parse_jcamp(text)[0]
    assert spec.x.tolist() == [1000.0, 1050.0, 1100.5]
    np.testing.assert_allclose(spec.y, [0.3, 0.2, 0.1])


def test_peak_table_xy_and_xyw():
    text = jdx(
        "##DATA CLASS=PEAK TABLE",
        "##NPOINTS=3",
        "##PEAK TABLE=(XYW..XYW)",
        "1715,2.0,12; 2950,1.0,20 3350,0.5,0",
        yunits="ABSORBANCE",
    )
    peaks = parse_jcamp(text)[0]
    assert isinstance(peaks, PeakList)
    assert peaks.positions.tolist() == [1715.0, 2950.0, 3350.0]
    np.testing.assert_allclose(peaks.intensities, [1.0, 0.5, 0.25])
    assert peaks.widths[0] == 12.0 and math.isnan(peaks.widths[2])
    pairs = jdx("##PEAK TABLE=(XY..XY)", "1715,4 1600 1", yunits="ARBITRARY UNITS")
    np.testing.assert_allclose(parse_jcamp(pairs)[0].intensities, [0.25, 1.0])


def test_transmittance_peak_table_ranks_deeper_bands_higher():
    """A band at 10 %T absorbs more than one at 80 %T: A = -log10(T) (Beer-Lambert)."""
    text = jdx("##PEAK TABLE=(XY..XY)", "1715,10 1200,80 3000,50", yunits="%TRANSMITTANCE")
    peaks = parse_jcamp(text)[0]
    by_pos = dict(zip(peaks.positions.tolist(), peaks.intensities.tolist()))
    assert by_pos[1715.0] == 1.0
    assert by_pos[1715.0] > by_pos[3000.0] > by_pos[1200.0]
    assert by_pos[3000.0] == pytest.approx(math.log10(2) / 1.0)  # A(50%) / A(10%)


def link(*children: str, title: str = "compound") -> str:
    head = f"##TITLE={title}\n##JCAMP-DX=5.01\n##DATA TYPE=LINK\n##BLOCKS={len(children)}\n"
    return head + "".join(children) + "##END=\n"


NMR = (
    "##TITLE=proton\n##JCAMP-DX=5.01\n##DATA TYPE=NMR SPECTRUM\n##XUNITS=HZ\n##YUNITS=ARBITRARY\n"
    "##FIRSTX=0\n##LASTX=1\n##NPOINTS=2\n##XYDATA=(X++(Y..Y))\n0 1 2\n##END=\n"
)


def test_link_file_keeps_infrared_blocks_and_skips_others():
    ir1 = xy(2, ["1000 1 2"]).replace("##TITLE=test", "##TITLE=first")
    ir2 = xy(2, ["1000 3 4"]).replace("##TITLE=test", "##TITLE=second")
    objs = parse_jcamp(link(ir1, NMR, ir2))
    assert [o.meta.title for o in objs] == ["first", "second"]
    assert objs[1].y.tolist() == [3, 4]


def test_non_infrared_file_is_refused_naming_its_type():
    with pytest.raises(ReadError, match="this is a NMR SPECTRUM file, not infrared"):
        parse_jcamp(NMR)
    with pytest.raises(ReadError, match="NMR SPECTRUM"):
        parse_jcamp(link(NMR, NMR))


def test_link_nesting_is_bounded():
    text = "".join(f"##TITLE=level {i}\n##DATA TYPE=LINK\n" for i in range(20)) + NMR
    with pytest.raises(ReadError, match="nested more than"):
        parse_jcamp(text)


def test_blocks_without_end_are_siblings():
    ir = xy(2, ["1000 1 2"]).replace("##END=\n", "")
    assert len(parse_jcamp(ir + ir + ir)) == 3


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("\x00\x01\x02 binary", "binary"),
        ("no labels here", "no JCAMP-DX labelled records"),
        (xy(2, ["1000 1 ?"]), "missing ordinate"),
        (xy(2, ["1000 1 2 #"]), "unexpected character"),
        (xy(2, ["1000 AZ99999999"]), "more than"),
        (xy(2, ["1000 J1"]), "DIF"),
        (xy(2, ["1000 S3"]), "DUP"),
        (xy(2, ["J 1 2"]), "must start with its abscissa"),
        (xy(2, ["1000 1 2"]).replace("##NPOINTS=2", "##NPOINTS=99999999999"), "at most"),
        (xy(2, ["1000 1 2"]).replace("##NPOINTS=2", "##NPOINTS=two"), "should be a number"),
        (xy(2, ["1000 1 2"]).replace("##FIRSTX=1000\n", ""), "FIRSTX"),
        (xy(2, ["1000 1 2"]).replace("(X++(Y..Y))", "(XYZ)"), "not supported"),
        (jdx("##PEAK TABLE=(XYW..XYW)", "1715,1"), "whole number of groups"),
        (jdx("##RESOLUTION=4"), "holds no ##XYDATA="),
        (jdx("##NTUPLES=INFRARED SPECTRUM"), "NTUPLES"),
    ],
)
def test_bad_input_gives_read_error(text, fragment):
    with pytest.raises(ReadError, match=fragment):
        parse_jcamp(text)


def test_xydata_ordinates_reads_any_data_type():
    assert [a.tolist() for a in xydata_ordinates(NMR)] == [[1.0, 2.0]]


# --------------------------------------------------------------------------------------------
# Writer
# --------------------------------------------------------------------------------------------


def sample_spectrum(n: int = 500, kind: str = "absorbance") -> Spectrum:
    x = np.linspace(400.0, 4000.0, n)
    y = 0.05 + np.exp(-(((x - 1715.0) / 15.0) ** 2)) + 0.4 * np.exp(-(((x - 2950) / 40.0) ** 2))
    if kind == "transmittance":
        y = 10.0 ** (-y)
    meta = Metadata(
        title="2-butanone, neat",
        origin="Lab 3",
        owner="J. Doe",
        resolution=4.0,
        state="liquid",
        sampling_procedure="film between KBr plates",
        prep=["film", "neat"],
        extra={"SPECTROMETER/DATA SYSTEM": "FTIR 2", "$NOTE": "two\nlines"},
    )
    return Spectrum(x, y, kind, meta)


@pytest.mark.parametrize("compression", ["affn", "difdup"])
def test_written_lines_obey_the_standard(compression):
    text = write_jcamp(sample_spectrum(), compression=compression)
    data = text.split("##XYDATA=(X++(Y..Y))\n")[1].split("##END=")[0].splitlines()
    assert all(len(line) <= LINE_LENGTH for line in text.splitlines())
    assert "##JCAMP-DX=5.01" in text
    if compression == "difdup":
        assert any(c in "".join(data) for c in "JKLMNOPQRjklmnopqr%")
        assert not any(c in "".join(data) for c in "+ ")  # no PAC or AFFN separators
    back = parse_jcamp(text)[0]
    assert back.x.size == 500


def test_difdup_lines_start_with_the_y_check_value():
    """JCAMP-DX: each line after a line ending in DIF form repeats that line's last ordinate."""
    spec = sample_spectrum()
    text = write_jcamp(spec, compression="difdup")
    data = text.split("##XYDATA=(X++(Y..Y))\n")[1].split("##END=")[0].splitlines()
    assert len(data) > 3
    yfactor = float(next(ln for ln in text.splitlines() if ln.startswith("##YFACTOR="))[10:])
    # decode each line on its own: its first value equals the previous line's last value
    joined: list[int] = []
    previous_last = None
    for line in data:
        values = _decode_line(line)
        if previous_last is not None:
            assert values[0] == previous_last
            values = values[1:]
        joined.extend(values)
        previous_last = joined[-1]
    assert len(joined) == spec.x.size
    np.testing.assert_allclose(np.array(joined) * yfactor, spec.y, atol=0.51e-6 * spec.y.max())


def _decode_line(line: str) -> list[int]:
    """Hand decoder of one DIFDUP line (X, SQZ, then DIF/DUP), written for this test."""
    sqz = {c: i for i, c in enumerate("@ABCDEFGHI")} | {c: -i for i, c in enumerate(" abcdefghi")}
    dif = {c: i for i, c in enumerate("%JKLMNOPQR")} | {c: -i for i, c in enumerate(" jklmnopqr")}
    dup = {c: i + 1 for i, c in enumerate("STUVWXYZs")}
    i = 0
    while line[i].isdigit() or line[i] in ".-":
        i += 1
    tokens = []
    while i < len(line):
        j = i + 1
        while j < len(line) and line[j].isdigit():
            j += 1
        tokens.append((line[i], line[i + 1 : j]))
        i = j
    values: list[int] = []
    last_dif = 0
    for char, digits in tokens:
        if char in sqz:
            first = sqz[char]
            v = int(str(abs(first)) + digits)
            values.append(-v if first < 0 else v)
        elif char in dif:
            first = dif[char]
            d = int(str(abs(first)) + digits)
            last_dif = -d if first < 0 else d
            values.append(values[-1] + last_dif)
        else:
            for _ in range(int(str(dup[char]) + digits) - 1):
                values.append(values[-1] + last_dif)
    return values


def test_metadata_round_trip():
    spec = sample_spectrum()
    back = parse_jcamp(write_jcamp(spec))[0]
    m, b = spec.meta, back.meta
    assert (b.title, b.origin, b.owner, b.resolution) == (m.title, m.origin, m.owner, 4.0)
    assert (b.state, b.sampling_procedure, b.prep) == (m.state, m.sampling_procedure, m.prep)
    assert b.extra["SPECTROMETER/DATA SYSTEM"] == "FTIR 2"
    assert b.extra["$NOTE"] == "two\nlines"


def test_uneven_axis_is_written_as_xypoints():
    spec = Spectrum([1000.0, 1001.0, 1003.5, 1010.0], [0.1, 0.2, 0.3, 0.4])
    text = write_jcamp(spec, compression="difdup")
    assert "##XYPOINTS=(XY..XY)" in text and "##XYDATA" not in text
    back = parse_jcamp(text)[0]
    np.testing.assert_allclose(back.x, spec.x, rtol=1e-12)
    np.testing.assert_allclose(back.y, spec.y, rtol=1e-6)


def test_writer_refuses_unknown_compression():
    with pytest.raises(ReflibError, match="compression"):
        write_jcamp(sample_spectrum(), compression="zip")


# Round-trip precision stated in write_jcamp: AFFN 7 significant digits (relative error
# <= 5e-7 per value); DIFDUP absolute error <= 0.5 * YFACTOR = 5e-7 * max|y|.

finite = st.floats(-10.0, 10.0, allow_nan=False, allow_infinity=False)


@st.composite
def spectra(draw):
    n = draw(st.integers(2, 300))
    start = draw(st.floats(100.0, 3000.0))
    step = draw(st.floats(0.05, 10.0))
    kind = draw(st.sampled_from(["absorbance", "transmittance"]))
    y = np.array(draw(st.lists(finite, min_size=n, max_size=n)))
    if kind == "transmittance":
        y = np.abs(y) / 10.0  # 0..1
    if draw(st.booleans()):
        y = np.round(y, draw(st.integers(0, 4)))  # flat runs exercise DUP
    x = start + step * np.arange(n)
    if draw(st.booleans()):
        x = x[::-1]
    return Spectrum(x, y, kind)


@settings(max_examples=60, deadline=None)
@given(spectra())
def test_affn_round_trip(spec):
    back = parse_jcamp(write_jcamp(spec, compression="affn"))[0]
    assert back.y_kind == spec.y_kind
    np.testing.assert_allclose(back.x, spec.x, rtol=1e-12)
    np.testing.assert_allclose(back.y, spec.y, rtol=5e-7, atol=1e-300)


@settings(max_examples=60, deadline=None)
@given(spectra())
def test_difdup_round_trip(spec):
    text = write_jcamp(spec, compression="difdup")
    back = parse_jcamp(text)[0]
    np.testing.assert_allclose(back.x, spec.x, rtol=1e-12)
    tol = 0.5e-6 * float(np.max(np.abs(spec.y))) * (1 + 1e-9) + 1e-300
    assert float(np.max(np.abs(back.y - spec.y))) <= tol
    assert all(len(line) <= LINE_LENGTH for line in text.splitlines())


@st.composite
def peak_lists(draw):
    n = draw(st.integers(0, 40))
    pos = draw(st.lists(st.floats(100.0, 4000.0), min_size=n, max_size=n, unique=True))
    inten = draw(st.lists(st.floats(0.0, 1.0), min_size=n, max_size=n))
    widths = draw(
        st.lists(st.one_of(st.just(math.nan), st.floats(0.5, 200.0)), min_size=n, max_size=n)
    )
    words = draw(st.lists(st.sampled_from(["vs", "s", "m", "w", "vw"]), min_size=n, max_size=n))
    broad = draw(st.lists(st.booleans(), min_size=n, max_size=n))
    shoulder = draw(st.lists(st.booleans(), min_size=n, max_size=n))
    return PeakList(pos, inten, widths, words, broad, shoulder, Metadata(prep=["atr"]))


@settings(max_examples=60, deadline=None)
@given(peak_lists())
def test_peak_list_round_trip(peaks):
    back = parse_jcamp(write_jcamp(peaks))[0]
    assert isinstance(back, PeakList)
    np.testing.assert_allclose(back.positions, peaks.positions, rtol=1e-9)
    np.testing.assert_allclose(back.intensities, peaks.intensities, rtol=1e-6, atol=1e-12)
    np.testing.assert_allclose(back.widths, peaks.widths, rtol=1e-6)  # NaN matches NaN
    assert back.strengths == peaks.strengths
    assert back.broad.tolist() == peaks.broad.tolist()
    assert back.shoulder.tolist() == peaks.shoulder.tolist()
    assert back.meta.prep == ["atr"]


def test_peak_table_writes_author_labels_in_a_private_label():
    """Labels go in a '##$' label (JCAMP-DX 5.01: '##$' labels are private to the writer)."""
    peaks = PeakList([1745.0, 2250.0, 1240.0], [1.0, 0.2, 0.6], labels=["ester C=O", "C≡N", None])
    text = write_jcamp(peaks)
    lines = text.splitlines()
    k = lines.index("##$REFLIB PEAK LABELS=(XA)")
    assert lines[k + 1 : k + 3] == ["(1745,<ester C=O>)", "(2250,<C≡N>)"]
    assert lines[k + 3].startswith("##")  # the band without a label has no line
    back = parse_jcamp(text)[0]  # the file still reads, positions and words unchanged
    assert back.positions.tolist() == [1240.0, 1745.0, 2250.0]
    assert back.strengths == peaks.strengths
    assert not any("LABELS" in key for key in back.meta.extra)
    assert "PEAK LABELS" not in write_jcamp(PeakList([1715.0], [1.0]))


# --------------------------------------------------------------------------------------------
# Robustness: anything malformed gives ReadError (a ReflibError), never another exception
# --------------------------------------------------------------------------------------------

SEED_TEXT = write_jcamp(sample_spectrum(120), compression="difdup") + write_jcamp(
    PeakList([1715.0, 2950.0], [1.0, 0.4], [12.0, np.nan])
)


def _parse_or_read_error(text: str) -> None:
    try:
        parse_jcamp(text)
    except ReflibError as exc:
        assert isinstance(exc, ReadError)


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.data())
def test_mutated_written_files_give_only_read_error(data):
    text = SEED_TEXT
    for _ in range(data.draw(st.integers(1, 6))):
        if not text:
            break
        i = data.draw(st.integers(0, len(text) - 1))
        op = data.draw(st.sampled_from(["replace", "delete", "insert", "truncate"]))
        char = data.draw(st.sampled_from(list("#=$@AJjS%?+-., \n9Zs(X)\x00\x1aé")))
        if op == "replace":
            text = text[:i] + char + text[i + 1 :]
        elif op == "delete":
            text = text[:i] + text[i + 1 :]
        elif op == "insert":
            text = text[:i] + char + text[i:]
        else:
            text = text[:i]
    _parse_or_read_error(text)


@settings(max_examples=80, deadline=None)
@given(st.binary(max_size=400))
def test_random_bytes_give_only_read_error(raw):
    _parse_or_read_error(raw.decode("latin-1"))
    _parse_or_read_error("##TITLE=x\n##XYDATA=(X++(Y..Y))\n" + raw.decode("latin-1"))
