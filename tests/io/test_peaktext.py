"""Typed peak lists, in the forms chemists write them in notebooks and experimental sections.

The notations checked here (strength abbreviations vs/s/m/w/vw, br, sh; a preparation in
parentheses after 'IR' or 'νmax'; 'cm-1' with a hyphen, a superscript or a caret) are the common
practice of experimental sections in organic chemistry (common practice, no source).
"""

from __future__ import annotations

import re

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from reflib.errors import ReadError, ReflibError
from reflib.io.peaktext import (
    PREP_WORDS,
    looks_like_peak_text,
    parse_peak_text,
    parse_peak_texts,
)
from reflib.spectrum import STRENGTH_WORDS


def _bands(pl):
    """(position, strength, broad, shoulder) high to low, as the list was typed."""
    return [(p.position, p.strength, p.broad, p.shoulder) for p in pl.descending()]


def test_parenthesised_strengths_and_trailing_unit():
    pl = parse_peak_text("3350 (br), 2935 (s), 1715 (vs), 1240 cm-1")
    assert _bands(pl) == [
        (3350.0, "m", True, False),  # a band with only 'br' is medium
        (2935.0, "s", False, False),
        (1715.0, "vs", False, False),
        (1240.0, "m", False, False),
    ]
    assert pl.meta.extra["intensities"] == "partly given"
    # intensities follow the words: vs strongest (normalised to 1), then s, then m
    assert pl.intensities[pl.positions == 1715.0][0] == 1.0
    s_to_vs = STRENGTH_WORDS["s"][1] / STRENGTH_WORDS["vs"][1]
    assert pl.intensities[pl.positions == 2935.0][0] == pytest.approx(s_to_vs)


def test_ir_film_prefix_and_superscript_unit():
    pl = parse_peak_text("IR (film): 3350 br, 1715 s cm⁻¹")
    assert pl.meta.prep == ["film"]
    assert "prep_text" not in pl.meta.extra
    assert _bands(pl) == [(3350.0, "m", True, False), (1715.0, "s", False, False)]


def test_nu_max_prefix_with_kbr_and_no_words():
    pl = parse_peak_text("νmax (KBr)/cm-1 3350, 1715")
    assert pl.meta.prep == ["kbr"]
    assert pl.positions.tolist() == [1715.0, 3350.0]
    assert pl.strengths == ["m", "m"]
    assert pl.meta.extra["intensities"] == "not given"


@pytest.mark.parametrize(
    "text",
    ["3350 br s, 1715 vs", "3350 (s, br), 1715 (vs)", "3350 (broad, strong); 1715 very strong"],
)
def test_word_orders_and_spellings(text):
    pl = parse_peak_text(text)
    assert _bands(pl) == [(3350.0, "s", True, False), (1715.0, "vs", False, False)]


def test_spelled_out_words_and_shoulder():
    pl = parse_peak_text("1735 (strong), 1715 (shoulder), 1600 medium, 1580 weak, 820 very weak")
    assert _bands(pl) == [
        (1735.0, "s", False, False),
        (1715.0, "m", False, True),
        (1600.0, "m", False, False),
        (1580.0, "w", False, False),
        (820.0, "vw", False, False),
    ]


def test_broad_band_default_widths_and_range():
    """Broad O-H/N-H above 3000 cm-1 default to 150 cm-1 FWHM, others 60 (common practice)."""
    pl = parse_peak_text("3500-3200 (br), 3300 br, 2550 (br), 1715 (s)")
    by_pos = dict(zip(pl.positions.tolist(), pl.widths.tolist(), strict=True))
    assert by_pos[3350.0] == 300.0  # the range: midpoint, width = range
    assert by_pos[3300.0] == 150.0
    assert by_pos[2550.0] == 60.0
    assert np.isnan(by_pos[1715.0])
    assert pl.broad.tolist() == [False, True, True, True]


@pytest.mark.parametrize(
    "text",
    [
        "1715 cm^-1, 1240",
        "1715 cm−1, 1240",  # Unicode minus
        "1715 cm–1, 1240",  # en dash
        "1715 cm-1; 1240 cm-1",
        "1715\n1240\n",
        "1715 and 1240.",
        "1715, 1240 cm⁻¹",
    ],
)
def test_units_dashes_and_separators(text):
    assert parse_peak_text(text).positions.tolist() == [1240.0, 1715.0]


def test_unicode_minus_range():
    pl = parse_peak_text("3500−3200 (br)")
    assert pl.positions.tolist() == [3350.0] and pl.widths.tolist() == [300.0]


def test_decimals_and_comments():
    pl = parse_peak_text("# compound 12, run 2026-02-11\n2110.5 (w), 1715.25 (vs)\n")
    assert pl.positions.tolist() == [1715.25, 2110.5]


@pytest.mark.parametrize(
    "text, prep",
    [
        ("IR (neat): 1715", ["neat"]),
        ("IR (ATR, neat) 1715", ["atr", "neat"]),
        ("IR (nujol mull): 1715", ["nujol"]),
        ("IR (mull): 1715", ["nujol"]),
        ("IR (CHCl3): 1715", ["chcl3"]),
        ("IR (CDCl3) 1715", ["cdcl3"]),
        ("IR (CCl4): 1715", ["ccl4"]),
        ("IR (CH2Cl2): 1715", ["ch2cl2"]),
        ("IR (DCM): 1715", ["ch2cl2"]),
        ("IR (CS2): 1715", ["cs2"]),
        ("IR (gas): 1715", ["gas"]),
        ("ATR: 1715", ["atr"]),
        ("(film) 1715", ["film"]),
    ],
)
def test_preparation_tokens(text, prep):
    assert parse_peak_text(text).meta.prep == prep


def test_unknown_prefix_words_are_kept_verbatim():
    pl = parse_peak_text("IR (thin film on Ge crystal): 1715 (s)")
    assert pl.meta.prep == ["film"]
    assert pl.meta.extra["prep_text"] == "IR (thin film on Ge crystal):"


def test_typed_text_is_kept_and_round_trips_through_to_text():
    text = "3350 (m, br), 2935 (s), 1715 (vs), 1240 (w) cm-1"
    pl = parse_peak_text(text)
    assert pl.meta.extra["peak_text"] == text
    assert pl.to_text() == text
    assert _bands(parse_peak_text(pl.to_text())) == _bands(pl)


# -- refusals -------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "text, fragment, line",
    [
        ("IR (film): no data", "no band positions", None),
        ("3350 (br), 1715.5.3 (s)", "not a number", 1),
        ("3350 (br)\n17150 (s)", "outside 100..5000", 2),
        ("3350 (br)\n1715 (s)\n95 (w)", "outside 100..5000", 3),
        ("3300 (sharpish)", "unknown word 'sharpish'", 1),
        ("1715 (s), 1240 (s), 1715 (m)", "given twice", 1),
        ("1715 (s, m)", "two strength words", 1),
        ("1715 (100), 1240 (45)", "not numbers", 1),
        ("1715 (s", "never closed", 1),
        ("1715 (s)), 1240", r"unexpected '\)'", 1),
        ("1715, s, 1240", "without a band position", 1),
        ("1715 very", "'very'", 1),
        ("3500-1200 (br)", "wide", 1),
        ("1715 = C=O", "unexpected '='", 1),
    ],
)
def test_refusals_say_what_and_where(text, fragment, line):
    with pytest.raises(ReadError, match=fragment) as err:
        parse_peak_text(text, source="notes.txt")
    assert err.value.line == line
    assert err.value.path == "notes.txt"


def test_unknown_word_message_lists_the_allowed_words():
    with pytest.raises(ReadError) as err:
        parse_peak_text("1715 (str)")
    msg = str(err.value)
    assert "'str'" in msg and "vs, s, m, w, vw, br, sh" in msg and "column 7" in msg


# -- sniffing -------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "text",
    [
        "3350, 2935, 1715, 1240 cm-1",
        "3350, 2935, 1715, 1240",
        "IR (film): 3350 br, 1715 s cm⁻¹",
        "νmax (KBr)/cm-1 3350, 1715",
        "3350 (br)\n2935 (s)\n1715 (vs)\n1240 (m)\n",
        "\n".join(str(4000 - 150 * i) for i in range(20)),  # one band per line, no words
        "3350, 2935, 2870, 1715, 1460,\n1375, 1240, 1100, 1050, 720 cm-1",
    ],
)
def test_sniffer_calls_typed_lists_peak_text(text):
    assert looks_like_peak_text(text)


@pytest.mark.parametrize(
    "text",
    [
        "\n".join(f"{4000.0 - 2 * i:.1f},0.98" for i in range(50)),
        "Wavenumber (cm-1),%T\n" + "\n".join(f"{4000 - 4 * i},{97.5 - i % 3}" for i in range(30)),
        "\n".join(f"{4000 - 4 * i},{i % 7}5;0,{i % 9}8" for i in range(30)),
        "\n".join(f"  {4000.0 - 4 * i:9.2f}\t{0.1 + 0.01 * (i % 5):.4f}" for i in range(12)),
        "\n".join(f"0.{i:03d}" for i in range(40)),  # a y column alone
        "",
    ],
)
def test_sniffer_calls_columns_delimited(text):
    assert not looks_like_peak_text(text)


# -- robustness -----------------------------------------------------------------------------

_ALPHABET = list("0123456789 .,;:()-−–\n\t") + ["cm-1", "cm⁻¹", "br", "s", "vs", "very", "IR", "x"]


@settings(max_examples=100, deadline=None)
@given(st.lists(st.sampled_from(_ALPHABET), max_size=60).map("".join))
def test_random_text_raises_only_reflib_errors(text):
    try:
        pl = parse_peak_text(text)
    except ReflibError:
        return
    assert len(pl) > 0
    assert np.all((pl.positions >= 100) & (pl.positions <= 5000))
    looks_like_peak_text(text)  # must not raise either


@settings(max_examples=100, deadline=None)
@given(st.data())
def test_mutated_lists_raise_only_reflib_errors(data):
    chars = list("IR (film): 3500-3200 (br), 2935 (s, sh), 1715.5 very strong; 1240 cm⁻¹")
    for _ in range(data.draw(st.integers(1, 4))):
        i = data.draw(st.integers(0, len(chars) - 1))
        chars[i] = data.draw(st.sampled_from(list("0.,;()-\n x9")))
    try:
        parse_peak_text("".join(chars))
    except ReflibError:
        pass


def test_source_names_the_file_in_meta_and_the_full_path_in_errors():
    pl = parse_peak_text("1715 (s)", source="notes/crude 42.txt")
    assert pl.meta.source_file == "crude 42.txt"


# -- characterisation lines as experimental sections write them ---------------------------------
#
# Every line below is written for these tests (invented compounds and values); the styles are
# the common practice of experimental sections and supporting information in organic chemistry
# (common practice, no source). Each case: the style, the line, the preparation tokens expected,
# and the bands expected high to low as (position, strength, broad, author's label); a band
# typed without a strength word is read as medium ('m').

_NMR = "1H NMR (400 MHz, CDCl3) δ 7.26 (s, 1H)"

SECTION_LINES = [
    # German/European journals: 'ν =' after the preparation, assignments after the strength
    ("nu-equals", "IR (KBr): ν = 3320 (s, NH), 1680 (vs, C=O) cm-1", ["kbr"],
     [(3320, "s", False, "NH"), (1680, "vs", False, "C=O")]),
    ("assignment-only", "IR (CHCl3) 3010, 1760 (C=O), 1220 cm-1", ["chcl3"],
     [(3010, "m", False, None), (1760, "m", False, "C=O"), (1220, "m", False, None)]),
    ("atr-assignments", "IR (ATR): 1715 (C=O), 1600 (C=C) cm-1", ["atr"],
     [(1715, "m", False, "C=O"), (1600, "m", False, "C=C")]),
    ("unit-in-prefix", "IR (KBr, cm-1): 3441 (br, OH), 1705 (s, C=O)", ["kbr"],
     [(3441, "m", True, "OH"), (1705, "s", False, "C=O")]),
    ("then-nmr", f"IR (film): 3350, 1715 cm-1; {_NMR}", ["film"],
     [(3350, "m", False, None), (1715, "m", False, None)]),
    ("then-ms", "IR (KBr) 3427, 2220, 1605 cm-1; MS m/z 234", ["kbr"],
     [(3427, "m", False, None), (2220, "m", False, None), (1605, "m", False, None)]),
    ("then-hrms", "IR (neat) 2958, 1717 cm-1; HRMS (ESI) calcd for C6H12O [M+H]+ 101.0961, "
     "found 101.0958.", ["neat"], [(2958, "m", False, None), (1717, "m", False, None)]),
    ("rf-first", "Rf 0.3; IR (film) 1715 (s) cm-1", ["film"], [(1715, "s", False, None)]),
    ("ft-ir-nu-tilde", "FT-IR (ATR) ν̃ = 3290 (m, N-H), 2210 (s, C≡N), 1650 (vs, C=O), "
     "1540 (amide II) cm⁻¹", ["atr"],
     [(3290, "m", False, "N-H"), (2210, "s", False, "C≡N"), (1650, "vs", False, "C=O"),
      (1540, "m", False, "amide II")]),
    ("atr-ir-v-tilde", "ATR-IR: ṽ = 3062 (w, arom. C-H), 1598 (m), 748 (s) cm-1", ["atr"],
     [(3062, "w", False, "arom. C-H"), (1598, "m", False, None), (748, "s", False, None)]),
    # British journals: 'νmax (prep)/cm-1' then the numbers
    ("numax-slash", "νmax (nujol)/cm-1 3280 (NH), 1655 (amide I), 1540 (amide II)", ["nujol"],
     [(3280, "m", False, "NH"), (1655, "m", False, "amide I"), (1540, "m", False, "amide II")]),
    ("vmax-colon", "vmax (film)/cm-1: 2978, 1731 (CO2Et), 1180 (C-O-C)", ["film"],
     [(2978, "m", False, None), (1731, "m", False, "CO2Et"), (1180, "m", False, "C-O-C")]),
    ("numax-solution", "νmax (CH2Cl2)/cm-1 3055, 2987, 1712 (C=O)", ["ch2cl2"],
     [(3055, "m", False, None), (2987, "m", False, None), (1712, "m", False, "C=O")]),
    ("v-max-space", "v max (KBr)/cm−1 3410 (OH), 1600, 1510", ["kbr"],
     [(3410, "m", False, "OH"), (1600, "m", False, None), (1510, "m", False, None)]),
    # American journals: letters glued to the number, 'br s', ranges
    ("glued-letters", "IR (neat): 3350br, 2935s, 1460m, 1050s cm-1", ["neat"],
     [(3350, "m", True, None), (2935, "s", False, None), (1460, "m", False, None),
      (1050, "s", False, None)]),
    ("range-en-dash", "IR (film) 3500–3200 (br, O-H), 2930 (s), 1050 (C-O) cm−1", ["film"],
     [(3350, "m", True, "O-H"), (2930, "s", False, None), (1050, "m", False, "C-O")]),
    ("br-s", "IR (film) 3300 (br s), 1650 (s), 1550 (m) cm-1", ["film"],
     [(3300, "s", True, None), (1650, "s", False, None), (1550, "m", False, None)]),
    ("plain-classic", "IR (neat): 3340 (br), 2930 (s), 1715 (s), 1240 (m) cm-1", ["neat"],
     [(3340, "m", True, None), (2930, "s", False, None), (1715, "s", False, None),
      (1240, "m", False, None)]),
    # whole characterisation paragraphs: only the IR part is read
    ("full-paragraph", "Colourless oil; Rf 0.42 (hexane/EtOAc 4:1); IR (film) 2962 (m), 1738 (vs, "
     "ester C=O), 1241 (s, C-O) cm-1; 1H NMR (400 MHz, CDCl3) δ 4.12 (q, J = 7.1 Hz, 2H).",
     ["film"], [(2962, "m", False, None), (1738, "vs", False, "ester C=O"),
                (1241, "s", False, "C-O")]),
    ("mp-and-analysis", "White solid (312 mg, 81%); mp 142-144 °C; IR (KBr) 3320 (NH2), 3190 "
     "(NH2), 1660 (C=O) cm-1; Anal. Calcd for C8H9NO: C, 71.1; H, 6.7; N, 10.4. Found: C, 70.9; "
     "H, 6.8; N, 10.3.", ["kbr"],
     [(3320, "m", False, "NH2"), (3190, "m", False, "NH2"), (1660, "m", False, "C=O")]),
    ("rotation-first", "[α]D20 −12.4 (c 1.0, CHCl3); IR (film) 3440 (br, OH), 2925, 1712 (C=O) "
     "cm-1", ["film"],
     [(3440, "m", True, "OH"), (2925, "m", False, None), (1712, "m", False, "C=O")]),
    ("sentences", "Yellow crystals, mp 98–100 °C (EtOH). IR (KBr) 3050 (w), 1600 (s), 1520 (s, "
     "NO2), 1345 (vs, NO2), 855 cm-1. MS (EI) m/z 227 (M+, 100).", ["kbr"],
     [(3050, "w", False, None), (1600, "s", False, None), (1520, "s", False, "NO2"),
      (1345, "vs", False, "NO2"), (855, "m", False, None)]),
    ("no-unit-then-13c", "IR (neat): 3374 (br, O-H), 2957 (s), 1466 (m), 1058 (s, C-O); "
     "13C NMR (101 MHz, CDCl3) δ 63.1, 32.8", ["neat"],
     [(3374, "m", True, "O-H"), (2957, "s", False, None), (1466, "m", False, None),
      (1058, "s", False, "C-O")]),
    ("then-nmr-list", "IR (film) 2980, 1745 (vs), 1372, 1240 (vs, C-O), 1047 cm-1; 1H NMR "
     "δ 4.05 (q, 2H), 2.02 (s, 3H), 1.23 (t, 3H).", ["film"],
     [(2980, "m", False, None), (1745, "vs", False, None), (1372, "m", False, None),
      (1240, "vs", False, "C-O"), (1047, "m", False, None)]),
    ("nmr-no-space-equals", "IR (film): 1725 (s, C=O); 1H NMR (300 MHz, CDCl3): δ = 9.78 (t, "
     "1H, CHO)", ["film"], [(1725, "s", False, "C=O")]),
    # shapes and qualified assignments
    ("free-and-bonded", "IR (CCl4) 3620 (sharp, free OH), 3480 (br, bonded OH) cm-1", ["ccl4"],
     [(3620, "m", False, "free OH"), (3480, "m", True, "bonded OH")]),
    ("acid-range", "IR (KBr) 3300-2500 (br, CO2H), 1695 (vs, C=O), 1290 (s) cm-1", ["kbr"],
     [(2900, "m", True, "CO2H"), (1695, "vs", False, "C=O"), (1290, "s", False, None)]),
    ("alkyne", "IR (neat) νmax 3300 (s, ≡C-H), 2120 (w, C≡C), 1250 cm-1", ["neat"],
     [(3300, "s", False, "≡C-H"), (2120, "w", False, "C≡C"), (1250, "m", False, None)]),
    ("nitrile-cn", "IR (film): 2225 (CN), 1605, 1510, 835 cm-1", ["film"],
     [(2225, "m", False, "CN"), (1605, "m", False, None), (1510, "m", False, None),
      (835, "m", False, None)]),
    ("nitro-sym-asym", "IR (KBr): 1530 (s, NO2 asym), 1350 (s, NO2 sym) cm-1", ["kbr"],
     [(1530, "s", False, "NO2 asym"), (1350, "s", False, "NO2 sym")]),
    ("group-after-bond", "IR (nujol mull) 3250 (m, N-H), 1735 (s, C=O ester), 1690 (s, C=O "
     "amide) cm-1", ["nujol"],
     [(3250, "m", False, "N-H"), (1735, "s", False, "C=O ester"),
      (1690, "s", False, "C=O amide")]),
    ("window-in-prefix", "IR (thin film, NaCl plates): 3400 (br), 1715 (s), 1100 (m) cm-1",
     ["film", "nacl"],
     [(3400, "m", True, None), (1715, "s", False, None), (1100, "m", False, None)]),
    ("gas-cell", "IR (gas) 3050, 1720 (C=O) cm-1", ["gas"],
     [(3050, "m", False, None), (1720, "m", False, "C=O")]),
    ("arom-qualifiers", "IR (ATR): ν = 3060 (w), 2928 (m), 1684 (vs, C=O), 1597 (s, C=C arom.), "
     "750 (s, C-H oop) cm-1.", ["atr"],
     [(3060, "w", False, None), (2928, "m", False, None), (1684, "vs", False, "C=O"),
      (1597, "s", False, "C=C arom."), (750, "s", False, "C-H oop")]),
    ("ftir-pellet", "FTIR (KBr pellet) 3431 (br), 2924, 1632 (C=N), 1590 cm-1", ["kbr"],
     [(3431, "m", True, None), (2924, "m", False, None), (1632, "m", False, "C=N"),
      (1590, "m", False, None)]),
    ("greek-prefix-word", "IR (CH2Cl2): 3054 (m), 1765 (vs, β-lactam C=O), 1265 (s) cm-1",
     ["ch2cl2"],
     [(3054, "m", False, None), (1765, "vs", False, "β-lactam C=O"), (1265, "s", False, None)]),
    ("terminal-alkene", "IR (neat) 3080, 1640 (C=C), 990, 910 (=CH2) cm-1", ["neat"],
     [(3080, "m", False, None), (1640, "m", False, "C=C"), (990, "m", False, None),
      (910, "m", False, "=CH2")]),
    ("ester-abbrev", "IR (film) 2250 (w, C≡N), 1735 (s, CO2Me) cm-1", ["film"],
     [(2250, "w", False, "C≡N"), (1735, "s", False, "CO2Me")]),
    ("two-groups-one-band", "IR (KBr): 3350–3150 (br, NH2, OH), 1610 (NH2 bend) cm−1", ["kbr"],
     [(3250, "m", True, "NH2, OH"), (1610, "m", False, "NH2 bend")]),
    ("anhydride", "IR (nujol) νmax 1780, 1720 (anhydride C=O), 1230 (C-O-C) cm-1", ["nujol"],
     [(1780, "m", False, None), (1720, "m", False, "anhydride C=O"),
      (1230, "m", False, "C-O-C")]),
    ("azide", "IR (KBr) 2120 (vs, N3), 1250 cm-1", ["kbr"],
     [(2120, "vs", False, "N3"), (1250, "m", False, None)]),
    ("two-preps", "IR (neat, ATR) 1815 (vs, C=O), 1040 (s) cm-1", ["neat", "atr"],
     [(1815, "vs", False, "C=O"), (1040, "s", False, None)]),
    ("nu-tilde-max", "IR (KBr): ν̃max = 3400 (br), 1730 (s), 1615 cm-1", ["kbr"],
     [(3400, "m", True, None), (1730, "s", False, None), (1615, "m", False, None)]),
    ("free-o-h-cdcl3", "IR (CDCl3) 3600 (w, free O-H), 1712 (s, C=O) cm-1", ["cdcl3"],
     [(3600, "w", False, "free O-H"), (1712, "s", False, "C=O")]),
    ("bend-rock", "IR (film) 2955, 1460, 1375 (CH3 umbrella), 725 (CH2 rock) cm-1", ["film"],
     [(2955, "m", False, None), (1460, "m", False, None), (1375, "m", False, "CH3 umbrella"),
      (725, "m", False, "CH2 rock")]),
    ("thiol-not-shoulder", "IR (KBr): ν = 2550 (w, SH), 1700 (s) cm-1", ["kbr"],
     [(2550, "w", False, "SH"), (1700, "s", False, None)]),
    ("nu-bracket", "IR (film) 3400 (br, ν(O-H)), 1375 (δ CH3) cm-1", ["film"],
     [(3400, "m", True, "ν(O-H)"), (1375, "m", False, "δ CH3")]),
    ("sp-c-h", "IR (ATR) 3270 (m, sp C-H), 2110 (w, C≡C) cm-1", ["atr"],
     [(3270, "m", False, "sp C-H"), (2110, "w", False, "C≡C")]),
]  # fmt: skip


def _labelled(pl):
    """(position, strength, broad, label) high to low."""
    return [(p.position, p.strength, p.broad, p.label) for p in pl.descending()]


def test_there_are_at_least_forty_section_lines():
    assert len(SECTION_LINES) >= 40
    assert len({style for style, *_ in SECTION_LINES}) == len(SECTION_LINES)


@pytest.mark.parametrize(
    "style, text, prep, bands", SECTION_LINES, ids=[c[0] for c in SECTION_LINES]
)
def test_section_lines_give_bands_strengths_labels_and_preparation(style, text, prep, bands):
    """Styles of experimental sections (common practice, no source)."""
    pl = parse_peak_text(text)
    assert pl.meta.prep == prep
    assert _labelled(pl) == [(float(p), s, b, lab) for p, s, b, lab in bands]
    # the part read is recorded, and lies in the line as given
    segment = pl.meta.extra["ir_segment"]
    assert " ".join(text.split()).find(segment) >= 0
    assert re.fullmatch(r"line 1, columns \d+-\d+", pl.meta.extra["ir_segment_at"])
    # the labels survive the chemist's form of the list
    assert _labelled(parse_peak_text(pl.to_text())) == _labelled(pl)


def test_segment_span_names_the_columns_read():
    text = f"Rf 0.3; IR (film) 1715 (s) cm-1; {_NMR}"
    pl = parse_peak_text(text)
    start = text.index("IR") + 1
    end = text.index("cm-1") + len("cm-1")
    assert pl.meta.extra["ir_segment_at"] == f"line 1, columns {start}-{end}"
    assert pl.meta.extra["ir_segment"] == "IR (film) 1715 (s) cm-1"


def test_other_techniques_data_is_not_read_as_bands():
    """The NMR shifts, masses and rotation of the line never become bands."""
    pl = parse_peak_text(SECTION_LINES[[c[0] for c in SECTION_LINES].index("mp-and-analysis")][1])
    assert pl.positions.tolist() == [1660.0, 3190.0, 3320.0]


def test_plain_lists_keep_no_segment_note_and_no_labels():
    pl = parse_peak_text("3350 (br), 2935 (s), 1715 (vs) cm-1")
    assert "ir_segment" not in pl.meta.extra
    assert pl.labels is None


def test_two_ir_segments_are_two_peak_lists():
    text = "IR (KBr) 3320 (NH), 1680 (C=O) cm-1; IR (CHCl3) 3440 (NH), 1695 (C=O) cm-1"
    lists = parse_peak_texts(text)
    assert [pl.meta.prep for pl in lists] == [["kbr"], ["chcl3"]]
    assert [pl.positions.tolist() for pl in lists] == [[1680.0, 3320.0], [1695.0, 3440.0]]
    assert [pl.labels for pl in lists] == [["C=O", "NH"], ["C=O", "NH"]]
    assert (
        lists[1]
        .meta.extra["ir_segment_at"]
        .startswith(f"line 1, columns {text.index('IR (C') + 1}-")
    )
    with pytest.raises(ReadError, match="2 IR segments") as err:
        parse_peak_text(text)
    assert "'IR (KBr)" in str(err.value) and "'IR (CHCl3)" in str(err.value)
    assert "column 38" in str(err.value)


def test_two_ir_segments_through_files(tmp_path):
    from reflib.io import read_all, read_spectrum

    p = tmp_path / "compound-7.txt"
    p.write_text("mp 88 °C; IR (KBr) 3320, 1680 cm-1; IR (CCl4) 3440, 1695 cm-1\n", "utf-8")
    lists = read_all(p)
    assert [pl.meta.prep for pl in lists] == [["kbr"], ["ccl4"]]
    with pytest.raises(ReadError) as err:
        read_spectrum(p)
    assert "IR (KBr) 3320, 1680 cm-1" in str(err.value)
    assert "IR (CCl4) 3440, 1695 cm-1" in str(err.value)


# -- lines that must still be refused ----------------------------------------------------------

_STRAY = "IR (film) 2930, 1715 cm-1; colourless oil, 1240; 1H NMR δ 7.26"

REFUSED_LINES = [
    # (why, text, message fragment, line, column or None); common practice, no source
    ("nmr alone", "1H NMR (400 MHz, CDCl3) δ 7.26 (s, 1H), 2.10 (s, 3H)", "no IR part", 1, 1),
    ("13c alone", "13C NMR (101 MHz, CDCl3) δ 170.9, 60.4, 21.0, 14.2", "no IR part", 1, 1),
    ("masses, hrms", "HRMS (ESI) m/z calcd for C10H12O2Na [M+Na]+ 187.0730, found 187.0728",
     "no IR part", 1, 1),
    ("masses, ei", "MS (EI) m/z 234 (100), 219 (45), 191 (20), 105 (80)", "no IR part", 1, 1),
    ("masses, bare m/z", "m/z 234 (100), 219 (45), 191 (20)", "no IR part", 1, 1),
    ("masses with abundances", "234 (100), 219 (45), 191 (20), 105 (80)", "not numbers", 1, 6),
    ("a quasi-molecular ion", "[M+H]+ 101.0961", "no IR part", 1, 1),
    ("table without units", "1715 1240 1100\n3350 2935 1600\n1450 1380 1020", "table of numbers",
     1, None),
    ("table with an intensity column", "1715\t0.85\n1240\t0.60\n1100\t0.42",
     "table of numbers", 1, None),
    ("numbers before IR", "3350, 1715; IR (film) 2930 cm-1", "before 'IR'", 1, 1),
    ("numbers after the IR part", _STRAY, "after the IR part", 1, _STRAY.index("1240") + 1),
    ("band after the unit and a word", "IR (KBr) 3320, 1680 cm-1 and 1240", "after the IR part",
     1, 30),
    ("numbers on an earlier line", "Compound 12\n1715, 1240\nIR (film) 2930 cm-1", "before 'IR'",
     2, 1),
    ("IR part without bands", "IR (film) no bands; 1H NMR δ 7.26", "holds no band", 1, 1),
    ("unknown word in parentheses", "IR (film) 1715 (s, sample B) cm-1", "unknown word 'sample'",
     1, 20),
    ("a qualifier alone", "1715 (str)", "unknown word 'str'", 1, 7),
    ("prose after a band", "IR (film) 1715 (s, C=O, sharpish)", "unknown word 'sharpish'", 1, 25),
    ("assignment without parentheses", "1715 s ester", "in parentheses", 1, 8),
    ("broad and sharp", "3300 (br, sharp)", "both broad and sharp", 1, 11),
]  # fmt: skip


@pytest.mark.parametrize(
    "why, text, fragment, line, column", REFUSED_LINES, ids=[c[0] for c in REFUSED_LINES]
)
def test_lines_that_are_not_ir_peak_lists_are_refused(why, text, fragment, line, column):
    with pytest.raises(ReadError, match=re.escape(fragment)) as err:
        parse_peak_text(text, source="si.txt")
    assert err.value.line == line
    if column is not None:
        assert f"(column {column})" in str(err.value)


def test_a_refused_ambiguous_line_says_what_was_expected():
    with pytest.raises(ReadError) as err:
        parse_peak_text(_STRAY)
    msg = str(err.value)
    assert "1240 could be a band" in msg and "'IR (film) 3350, 1715 cm-1'" in msg
    assert "'1H NMR' at line 1" in msg


# -- the author's labels beside reflib's reading -----------------------------------------------


def test_compare_labels_uses_the_lookup_it_is_given():
    from reflib.io.peaktext import compare_labels

    pl = parse_peak_text("IR (film) 2250 (OH), 1760 (s, C=O), 1240 cm-1")
    calls = []

    def lookup(p):
        calls.append(len(p))
        return ["ester C-O stretch?", "ester C=O?", "nitrile C#N?"]

    notes = compare_labels(pl, lookup)
    assert calls == [3]
    assert [n.text for n in notes] == [
        "author says OH at 2250; reflib: nitrile C#N? (they differ)",
        "author says C=O at 1760; reflib: ester C=O?",
    ]
    assert [n.agree for n in notes] == [False, True]
    assert compare_labels(parse_peak_text("1715 (s)"), lookup) == [] and calls == [3]


def test_compare_labels_with_reflibs_correlation_table():
    """An ester carbonyl near 1740 cm-1 and a nitrile near 2250 cm-1 (common practice)."""
    from reflib.chem.bands import describe_all
    from reflib.io.peaktext import compare_labels

    pl = parse_peak_text("IR (film) 2250 (w, C≡N), 1745 (vs, C=O), 1240 (s, C-O) cm-1")
    notes = {n.position: n for n in compare_labels(pl, describe_all)}
    assert notes[1745.0].agree is True and "C=O" in notes[1745.0].reflib
    assert notes[2250.0].agree is True and "C#N" in notes[2250.0].reflib
    assert notes[1745.0].text.startswith("author says C=O at 1745; reflib: ")


# -- the plain form, read without the tokenizer -------------------------------------------------


def _tokenized(text, source):
    """The tokenizing parser's reading of ``text``, bypassing the plain-form reader."""
    from reflib.io import peaktext

    parser = peaktext._Parser(text, source)
    return [peaktext._peak_list(parser, seg, text, source) for seg in parser.segments()]


def _same_lists(a, b):
    assert a.meta == b.meta
    for name in ("positions", "intensities", "widths", "broad", "shoulder"):
        assert np.array_equal(getattr(a, name), getattr(b, name), equal_nan=True), name
    assert list(a.strengths) == list(b.strengths) and a.labels == b.labels


_PLAIN_WORDS = ["vs", "s", "m", "w", "vw", "br", "sh"]
_PREP_WORDS = sorted(PREP_WORDS)  # every preparation word a prefix may hold


@st.composite
def _plain_texts(draw):
    n = draw(st.integers(1, 12))
    # positions near and beyond the accepted range, with and without decimals; repeats allowed
    positions = draw(
        st.lists(
            st.one_of(
                st.integers(95, 5005).map(str),
                st.floats(100, 4999, allow_nan=False).map(lambda x: f"{x:.1f}"),
            ),
            min_size=n,
            max_size=n,
        )
    )
    bands = []
    for pos in positions:
        words = draw(st.lists(st.sampled_from(_PLAIN_WORDS), max_size=2))
        bands.append(f"{pos} ({', '.join(words)})" if words else pos)
    prefix = ""
    if draw(st.booleans()):
        word = draw(st.sampled_from(_PREP_WORDS))
        word = draw(st.sampled_from([word, word.upper(), word.capitalize()]))
        prefix = f"IR ({word}){draw(st.sampled_from([':', '']))} "
    ending = draw(st.sampled_from(["", "\n", "  ", " \n", "\r\n"]))  # \r\n: a Windows file
    return f"{prefix}{', '.join(bands)} cm-1{ending}"


@settings(max_examples=400, deadline=None)
@given(_plain_texts())
def test_plain_form_reads_as_the_tokenizing_parser_does(text):
    # The plain form ('IR (film): 3350 (s, br), 1715 (vs) cm-1') is read by a regular
    # expression instead of the tokenizer; both must give the same list, or the same refusal
    # (a position out of range, given twice, two strength words).
    try:
        expected = _tokenized(text, "notebook/p1.txt")
    except ReadError as exc:
        with pytest.raises(ReadError) as got:
            parse_peak_texts(text, source="notebook/p1.txt")
        assert str(got.value) == str(exc)
        return
    from reflib.io import peaktext

    # the plain-form reader took it: it leaves to the tokenizer only 'fluorocarbon' (which
    # needs the word 'mull' beside it) and the hyphenated 'ATR-IR' and 'ATR-FTIR'
    low = text.lower()
    assert peaktext._plain_peaks(text, None) is not None or "fluorocarbon" in low or "atr-" in low
    got = parse_peak_texts(text, source="notebook/p1.txt")
    assert len(got) == len(expected) == 1
    _same_lists(got[0], expected[0])


def test_plain_form_takes_the_lists_reflib_writes():
    from reflib.io import peaktext

    text = "IR (KBr): 3350 (m, br), 1715 (vs), 1240 (w, sh), 1100 cm-1\n"
    assert peaktext._plain_peaks(text, None) is not None  # read without the tokenizer
    pl = parse_peak_text(text)
    assert peaktext._plain_peaks(pl.to_text(), None) is not None
    _same_lists(parse_peak_text(pl.to_text()), _tokenized(pl.to_text(), None)[0])
    assert pl.meta.extra["ir_segment_at"] == f"line 1, columns 1-{len(text.rstrip())}"


def test_long_digit_run_in_a_parenthesis_is_refused_at_once():
    # found by scripts/fuzz_readers.py --seed 13: the formula pattern held a repeated \d+ inside
    # a repeat, so a run of n digits before a letter took about 2**n steps to refuse (18
    # digits: 0.07 s; 400: never). The word is refused like any other unknown word.
    text = "IR (KBr): 3350 (br," + "9" * 400 + "m), 2950 (m) cm-1"
    with pytest.raises(ReadError, match="unknown word"):
        parse_peak_texts(text, source="x")
