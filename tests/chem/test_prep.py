"""reflib.chem.prep: token parsing, region union, weight profile (taper, minimum), reporting,
table."""

from __future__ import annotations

import doctest

import numpy as np
import pytest

import reflib.chem.prep as prep
from reflib.chem.prep import (
    AIR,
    ALIASES,
    KINDS,
    PREPARATIONS,
    TOKENS,
    atr_correction,
    harmonic_isotope_shift,
    merged_regions,
    opaque_below,
    own_bands,
    parse_tokens,
    regions_for,
    weight_profile,
)
from reflib.errors import ValidationError


def test_docstring_examples_hold():
    result = doctest.testmod(prep, optionflags=doctest.NORMALIZE_WHITESPACE)
    assert result.attempted > 5
    assert result.failed == 0


# --- parsing ---------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("nujol", ["nujol"]),
        ("Nujol", ["nujol"]),
        ("mull", ["nujol"]),
        ("Mineral oil", ["nujol"]),
        ("  mineral   OIL ", ["nujol"]),
        ("KBr pellet", ["kbr"]),
        ("kbr disc", ["kbr"]),
        ("DCM", ["ch2cl2"]),
        ("dichloromethane", ["ch2cl2"]),
        ("chcl3,caf2", ["chcl3", "caf2"]),
        ("nujol, KBr-window", ["nujol", "kbr-window"]),
        ("nujol; kbr_window", ["nujol", "kbr-window"]),
        ("neat", ["neat"]),
        ("film", ["film"]),
        ("CDCl3", ["cdcl3"]),
        ("diamond", ["atr"]),
        ("acetonitrile", ["mecn"]),
    ],
)
def test_parse_tokens_aliases_and_case(text, expected):
    assert parse_tokens(text) == expected


def test_parse_tokens_iterables_empty_and_duplicates():
    assert parse_tokens(None) == []
    assert parse_tokens("") == []
    assert parse_tokens(" , ,") == []
    assert parse_tokens([]) == []
    assert parse_tokens(["Nujol"]) == ["nujol"]
    assert parse_tokens(["chcl3, caf2", "CaF2"]) == ["chcl3", "caf2"]
    # duplicates (also through aliases) are dropped, first occurrence kept
    assert parse_tokens("caf2,mull,nujol,mineral oil,CAF2") == ["caf2", "nujol"]


def test_unknown_token_lists_valid_ones_and_suggests():
    with pytest.raises(ValidationError) as info:
        parse_tokens("chcl3, nujoll")
    message = str(info.value)
    assert "'nujoll'" in message
    assert "did you mean 'nujol'" in message
    for token in TOKENS:
        assert token in message


def test_unknown_token_suggestion_goes_through_aliases():
    with pytest.raises(ValidationError, match="did you mean 'ch2cl2'"):
        parse_tokens("dichlormethane")


def test_unknown_token_without_close_match_has_no_suggestion():
    with pytest.raises(ValidationError) as info:
        parse_tokens("xyzzy")
    assert "did you mean" not in str(info.value)
    assert "valid tokens: nujol" in str(info.value)


def test_air_is_not_a_token_and_says_why():
    with pytest.raises(ValidationError, match="always"):
        parse_tokens("air")


def test_non_string_item_is_rejected():
    with pytest.raises(ValidationError, match="strings"):
        parse_tokens(["nujol", 3])


def test_every_token_and_alias_parses_to_itself_or_its_target():
    for token in TOKENS:
        assert parse_tokens(token) == [token]
        assert parse_tokens(token.upper()) == [token]
    for alias, token in ALIASES.items():
        assert parse_tokens(alias) == [token]
    assert "air" not in PREPARATIONS


# --- the table ---------------------------------------------------------------------------------


def test_table_is_consistent():
    expected = {"nujol", "fluorocarbon", "kbr", "chcl3", "cdcl3", "ccl4", "ch2cl2", "cs2"}
    expected |= {"atr", "film", "neat", "gas", "caf2", "baf2", "nacl", "kbr-window", "znse"}
    assert expected <= set(TOKENS)
    for token, p in [*PREPARATIONS.items(), ("air", AIR)]:
        assert p.token == token
        assert p.kind in KINDS
        assert p.description
        for r in p.regions:
            assert r.token == token
            assert 0 <= r.lo < r.hi
            assert 0 <= r.weight < 1
            assert r.reason and r.source
        for position, intensity, fwhm in p.bands:
            assert position > 0 and 0 < intensity <= 1 and fwhm > 0
        if p.bands:
            assert max(b[1] for b in p.bands) == 1.0  # relative within the preparation
    windows = [p for p in PREPARATIONS.values() if p.kind == "window"]
    assert windows and all(p.cutoff_cm1 is not None for p in windows)


def test_every_notable_own_band_lies_in_a_spoiled_region_of_its_token():
    # a preparation's own band of relative intensity >= 0.2 must be masked by its own regions
    for token, p in PREPARATIONS.items():
        for position, intensity, _fwhm in p.bands:
            if intensity >= 0.2:
                w = weight_profile(np.array([position]), [token], air=False)[0]
                assert w < 1, f"{token} band at {position} cm-1 not masked"


def _table(*rows: str) -> str:
    head = ",".join(prep._COLUMNS)
    air = "prep,air,gas,,,,,,,air,"
    return "\n".join([head, air, *rows])


@pytest.mark.parametrize(
    ("rows", "fragment"),
    [
        (["region,air,,100,200,1.2,,,,x,src"], "weight"),
        (["region,air,,200,100,0.5,,,,x,src"], "lo_cm1 < hi_cm1"),
        (["region,air,,100,200,0.5,,,,x,"], "source"),
        (["region,air,,abc,200,0.5,,,,x,src"], "number"),
        (["spot,air,,100,200,0.5,,,,x,src"], "unknown record"),
        (["region,oil,,100,200,0.5,,,,x,src"], "before its 'prep' row"),
        (["prep,oil,slurry,,,,,,,x,"], "kind"),
        (["prep,oil,mull,,,,,,,x,", "alias,oil,,,,,,,,air,"], "alias"),
        (["band,air,,,,,100,0,5,x,src"], "intensity"),
    ],
)
def test_malformed_table_is_refused_with_row(rows, fragment):
    with pytest.raises(prep._TableError, match=fragment):
        prep._parse_table(_table(*rows), "t.csv")


def test_table_needs_air_and_header():
    with pytest.raises(prep._TableError, match="air"):
        prep._parse_table(",".join(prep._COLUMNS) + "\nprep,oil,mull,,,,,,,x,\n")
    with pytest.raises(prep._TableError, match="header"):
        prep._parse_table("a,b\n1,2\n")


# --- regions -------------------------------------------------------------------------------


def test_regions_for_is_the_sorted_union_plus_air():
    both = regions_for(["chcl3", "caf2"], air=False)
    assert set(both) == set(PREPARATIONS["chcl3"].regions) | set(PREPARATIONS["caf2"].regions)
    assert [r.lo for r in both] == sorted(r.lo for r in both)
    with_air = regions_for(["chcl3", "caf2"])
    assert set(with_air) - set(both) == set(AIR.regions)
    assert regions_for([], air=False) == []
    assert regions_for("chloroform, CaF2", air=False) == both  # strings and aliases accepted


def test_regions_for_rejects_unknown_tokens():
    with pytest.raises(ValidationError):
        regions_for(["chcl3", "benzene"])


# --- weight profile ------------------------------------------------------------------------------


def test_taper_is_linear_outside_the_region_edges():
    # air CO2 stretch region 2280-2400 at weight 0.3
    grid = np.array([2270.0, 2275.0, 2280.0, 2340.0, 2400.0, 2405.0, 2410.0, 2411.0])
    w = weight_profile(grid, [], taper_cm1=10.0)
    np.testing.assert_allclose(w, [1.0, 0.65, 0.3, 0.3, 0.3, 0.65, 1.0, 1.0])


def test_no_taper_gives_a_step_and_zero_regions_stay_exactly_zero():
    grid = np.array([1239.0, 1240.0, 1240.5, 1250.0])
    np.testing.assert_array_equal(
        weight_profile(grid, ["chcl3"], air=False, taper_cm1=0), [0.0, 0.0, 1.0, 1.0]
    )
    tapered = weight_profile(grid, ["chcl3"], air=False, taper_cm1=20)
    assert tapered[0] == 0.0 and tapered[1] == 0.0
    assert 0.0 < tapered[2] < tapered[3] < 1.0
    inside = np.linspace(1195.0, 1240.0, 46)
    assert np.all(weight_profile(inside, ["chcl3"], air=False, taper_cm1=50) == 0.0)


def test_overlaps_take_the_minimum_not_the_product():
    # KBr water 3200-3600 at 0.3 overlaps the air's water-vapour lines 3500-3900 at 0.6
    w = weight_profile(np.array([3550.0]), ["kbr"])[0]
    assert w == pytest.approx(0.3)
    # the same absorber named twice does not count twice
    single = weight_profile(np.array([700.0, 3020.0]), ["chcl3"])
    double = weight_profile(np.array([700.0, 3020.0]), ["chcl3", "chloroform"])
    np.testing.assert_array_equal(single, double)


def test_weight_profile_on_an_arbitrary_grid():
    rng = np.random.default_rng(3)
    grid = rng.uniform(150.0, 4200.0, 500)  # unsorted, irregular
    w = weight_profile(grid, "nujol,nacl")
    order = np.argsort(grid)
    w_sorted = weight_profile(grid[order], "nujol,nacl")
    np.testing.assert_array_equal(w[order], w_sorted)
    assert np.all((w >= 0) & (w <= 1))
    assert np.all(w[grid < 650] == 0)
    assert np.all(weight_profile(grid, [], air=False) == 1)
    assert weight_profile(np.array([]), "nujol").shape == (0,)


@pytest.mark.parametrize(
    ("grid", "taper", "fragment"),
    [
        (np.zeros((2, 2)), 10.0, "one-dimensional"),
        (np.array([1000.0, np.nan]), 10.0, "non-finite"),
        (np.array([1000.0]), -1.0, "taper"),
        (np.array([1000.0]), float("inf"), "taper"),
    ],
)
def test_weight_profile_rejects_bad_input(grid, taper, fragment):
    with pytest.raises(ValidationError, match=fragment):
        weight_profile(grid, ["nujol"], taper_cm1=taper)


# --- reporting ----------------------------------------------------------------------------------


def test_merged_regions_joins_reasons_of_the_same_class():
    merged = merged_regions("nujol,hexane", air=False)
    ch = [m for m in merged if m[0] <= 2900 <= m[1]]
    assert len(ch) == 1
    lo, hi, reason = ch[0]
    assert (lo, hi) == (2800.0, 3000.0)
    assert reason.count("; ") == 1
    assert "mineral oil C-H stretches (nujol mull)" in reason
    assert "hexane" in reason


def test_merged_regions_keeps_classes_apart_and_drops_covered_ones():
    merged = merged_regions("chcl3,caf2", air=False)
    # chloroform's opaque C-Cl region (600-820) merges into the CaF2 cutoff, both reasons kept
    assert merged[0] == (
        0.0,
        1000.0,
        "no light below about 1000 (CaF2 window); "
        "chloroform C-Cl stretches (757, 668), opaque in a 0.1 mm cell",
    )
    # the falling edge (weight 0.3) is another class: its own entry, not merged
    assert (1000.0, 1100.0, "CaF2 window transmission falling off") in merged
    # the nujol rock (weight 0.6) lies inside the dropped cutoff: left out as it changes nothing
    with_mull = merged_regions("nujol,caf2", air=False)
    assert not any("722" in reason for _, _, reason in with_mull)
    assert merged_regions("nujol", air=False)[0][2].startswith("mineral oil CH2 rock")
    # the low-weight C-H stretch stays its own entry
    assert any(lo == 3000.0 and hi == 3040.0 for lo, hi, _ in merged)


def test_merged_regions_within_clips_to_the_compared_range():
    merged = merged_regions("nujol", within=(650.0, 4000.0))
    assert all(650.0 <= lo < hi <= 4000.0 for lo, hi, _ in merged)
    assert (3500.0, 3900.0, "water vapour lines (O-H stretch region)") in merged
    inside = merged_regions("caf2", air=False, within=(1200.0, 4000.0))
    assert inside == []
    with pytest.raises(ValidationError, match="within"):
        merged_regions("nujol", within=(4000.0, 650.0))


# --- bands, cutoffs, helpers --------------------------------------------------------------------


def test_own_bands_are_sorted_and_labelled():
    bands = own_bands(["chcl3", "nujol"])
    assert [b[0] for b in bands] == sorted(b[0] for b in bands)
    assert {b[3] for b in bands} == {"chcl3", "nujol"}
    assert len(bands) == len(PREPARATIONS["chcl3"].bands) + len(PREPARATIONS["nujol"].bands)
    assert own_bands("caf2") == []
    with_air = own_bands("caf2", air=True)
    assert with_air and {b[3] for b in with_air} == {"air"}


def test_opaque_below_takes_the_highest_cutoff():
    assert opaque_below(["nacl", "caf2"]) == 1000.0
    assert opaque_below("kbr-window") == 400.0
    assert opaque_below(["chcl3", "nujol"]) is None
    assert opaque_below([]) is None


def test_atr_correction_scales_relative_to_the_reference():
    x = np.array([500.0, 1000.0, 3000.0])
    y = np.array([0.4, 0.2, 0.1])
    np.testing.assert_allclose(atr_correction(x, y), [0.2, 0.2, 0.3])
    np.testing.assert_allclose(atr_correction(x, y, reference_cm1=500.0), [0.4, 0.4, 0.6])
    with pytest.raises(ValidationError):
        atr_correction(x, y[:2])
    with pytest.raises(ValidationError):
        atr_correction(np.array([0.0, 1.0, 2.0]), y)
    with pytest.raises(ValidationError):
        atr_correction(x, y, reference_cm1=0.0)


def test_harmonic_isotope_shift_basic_properties():
    assert harmonic_isotope_shift(3000.0, 12.0, 1.0, 1.0) == pytest.approx(3000.0)
    heavier = harmonic_isotope_shift(1000.0, 12.0, 16.0, 18.0)
    assert heavier < 1000.0
    with pytest.raises(ValidationError):
        harmonic_isotope_shift(3000.0, 12.0, 0.0, 2.0)
    with pytest.raises(ValidationError):
        harmonic_isotope_shift(-1.0, 12.0, 1.0, 2.0)
