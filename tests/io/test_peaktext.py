"""Typed peak lists, in the forms chemists write them in notebooks and experimental sections.

The notations checked here (strength abbreviations vs/s/m/w/vw, br, sh; a preparation in
parentheses after 'IR' or 'νmax'; 'cm-1' with a hyphen, a superscript or a caret) are the common
practice of experimental sections in organic chemistry (common practice, no source).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from reflib.errors import ReadError, ReflibError
from reflib.io.peaktext import looks_like_peak_text, parse_peak_text
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
        ("3300 (sharp)", "unknown word 'sharp'", 1),
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


def test_band_assignments_are_refused_with_a_hint():
    for text in ("1715 (C=O)", "3400-3200 (br, O-H)"):
        with pytest.raises(ReadError, match="assignments"):
            parse_peak_text(text)


def test_source_names_the_file_in_meta_and_the_full_path_in_errors():
    pl = parse_peak_text("1715 (s)", source="notes/crude 42.txt")
    assert pl.meta.source_file == "crude 42.txt"
