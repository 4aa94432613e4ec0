"""The correlation table and band annotation (reflib.chem.bands).

Ranking expectations are facts of the trade (common practice, no source): a broad band near
3300 cm-1 is read as O-H before N-H or alkyne C-H, a sharp strong one as alkyne C-H; a weak
sharp band near 2120 is a terminal alkyne; a very strong band near 1715 is a carbonyl, not C=C.
"""

from __future__ import annotations

import math

import pytest

from reflib.chem import bands
from reflib.chem.isotope import deuterated_range
from reflib.chem.structure import group_patterns
from reflib.errors import ValidationError
from reflib.spectrum import Metadata, Peak, PeakList


def test_table_has_at_least_sixty_entries_each_with_a_source() -> None:
    rows = bands.table()
    assert len([r for r in rows if r.kind == "band"]) >= 60
    assert all(r.source.strip() for r in rows)
    assert len({r.id for r in rows}) == len(rows)
    assert bands.table() is rows  # loaded once


def test_table_groups_and_smarts_groups_agree() -> None:
    """Every group of the table has SMARTS, and every SMARTS group has bands."""
    table_groups = {g for r in bands.table() if r.kind != "artefact" for g in r.groups}
    smarts_groups = {p.group for p in group_patterns()}
    assert table_groups == smarts_groups


def test_notes_the_issue_asks_for_are_in_the_table() -> None:
    by_id = {r.id: r for r in bands.table()}
    assert "symmetric" in by_id["alkyne_internal_cc"].notes
    assert "two carbonyl bands" in by_id["anhydride_co_high"].notes
    assert "conjugation" in by_id["ketone_co"].notes and "ring" in by_id["ketone_co"].notes


def test_derived_isotope_rows_follow_from_their_parent_rows() -> None:
    """X-D rows are derived from the X-H rows (harmonic lower edge, Morse upper edge)."""
    by_id = {r.id: r for r in bands.table()}
    derived = [r for r in bands.table() if r.kind == "isotope"]
    assert {r.group for r in derived} == {"c_deuterium", "o_deuterium", "n_deuterium"}
    for row in derived:
        parent = by_id[row.derived_from]
        x = {"c_deuterium": "C", "o_deuterium": "O", "n_deuterium": "N"}[row.group]
        lo, hi = deuterated_range(parent.lo_cm1, parent.hi_cm1, x)
        assert row.lo_cm1 == pytest.approx(lo, abs=1.0), row.id
        assert row.hi_cm1 == pytest.approx(hi, abs=1.0), row.id
        assert row.source.startswith("derived: harmonic oscillator")


def test_parse_table_names_the_line_of_a_bad_row() -> None:
    header = bands.resources.files("reflib").joinpath("data", bands.TABLE_FILE).read_text()
    header = header.splitlines()[0]
    bad = header + "\nx,g,band,lab,1700,1750,0,,huge,sharp,,,,,from memory\n"
    with pytest.raises(ValidationError) as err:
        bands.parse_table(bad)
    assert err.value.line == 2 and "strength" in str(err.value)
    swapped = header + "\nx,g,band,lab,1750,1700,0,,s,sharp,,,,,from memory\n"
    with pytest.raises(ValidationError):
        bands.parse_table(swapped)
    nosource = header + "\nx,g,band,lab,1700,1750,0,,s,sharp,,,,,\n"
    with pytest.raises(ValidationError, match="source"):
        bands.parse_table(nosource)


def _labels(found: list[bands.Assignment]) -> list[str]:
    return [a.label for a in found]


def test_broad_band_at_3300_prefers_oh() -> None:
    first = bands.candidates(3300.0, strength="s", broad=True)[0]
    assert "O-H" in first.label


def test_sharp_strong_band_at_3300_prefers_alkyne_ch() -> None:
    first = bands.candidates(3300.0, strength="s", broad=False)[0]
    assert first.id == "alkyne_ch_stretch"


def test_width_decides_shape_when_no_flag_is_given() -> None:
    assert "O-H" in bands.candidates(3300.0, strength="s", width=250.0)[0].label
    assert bands.candidates(3300.0, strength="s", width=15.0)[0].id == "alkyne_ch_stretch"


def test_weak_sharp_2120_prefers_terminal_alkyne() -> None:
    first = bands.candidates(2120.0, strength="w", broad=False)[0]
    assert first.id == "alkyne_terminal_cc"


def test_very_strong_1715_is_a_carbonyl_not_cc() -> None:
    found = bands.candidates(1715.0, strength="vs", broad=False, top=5)
    assert "C=O" in found[0].label
    assert all(a.group != "alkene" for a in found)


def test_strength_and_position_each_matter() -> None:
    """A weak 1650 band reads as C=C before amide C=O; a very strong one the other way."""
    weak = bands.candidates(1650.0, strength="w", broad=False)
    strong = bands.candidates(1650.0, strength="vs", broad=False)
    assert weak[0].group == "alkene"
    assert strong[0].group != "alkene"


def test_conjugation_lowers_the_ketone_reading() -> None:
    """Acetophenone's carbonyl near 1685 (from memory) reads as a conjugated ketone."""
    assert "conjugated ketone C=O stretch" in _labels(bands.candidates(1685.0, strength="vs"))
    assert "conjugated ketone C=O stretch" not in _labels(bands.candidates(1715.0, strength="vs"))


def test_gas_phase_moves_carbonyl_ranges_up() -> None:
    """Gas-phase carbonyls sit about 20 cm-1 above the liquid (from memory): acetone gas
    near 1738 cm-1 reads as a ketone only with phase='gas'."""
    row = next(r for r in bands.table() if r.id == "ketone_co")
    lo, hi = row.range_for("gas")
    assert lo <= 1738.0 <= hi and not row.lo_cm1 <= 1738.0 <= row.hi_cm1
    gas = _labels(bands.candidates(1738.0, strength="vs", phase="gas"))
    assert "ketone C=O stretch" in gas


def test_artefacts_of_the_preparation_come_first_when_the_preparation_is_given() -> None:
    """Mineral oil's CH2 bend near 1462 (common practice, no source)."""
    plain = bands.candidates(1462.0, strength="s")
    mulled = bands.candidates(1462.0, strength="s", prep=["nujol"])
    assert mulled[0].id == "nujol_ch2_bend"
    assert plain[0].id != "nujol_ch2_bend"


def test_groups_filter_and_top() -> None:
    found = bands.candidates(1740.0, groups=["ester"], top=5)
    assert found and all(a.group == "ester" for a in found)
    assert len(bands.candidates(1740.0, top=2)) == 2
    scores = [a.score for a in bands.candidates(1740.0, top=10)]
    assert scores == sorted(scores, reverse=True) and all(0 < s <= 1 for s in scores)


def test_nothing_fits_far_from_every_range() -> None:
    assert bands.candidates(4500.0) == []
    assert bands.describe(Peak(4500.0, 1.0, 10.0, "vs", False, False)) == ""


def test_describe_gives_short_question_marked_labels() -> None:
    text = bands.describe(Peak(2250.0, 0.5, 8.0, "s", False, False))
    assert text.startswith("nitrile C#N?")
    assert " stretch" not in text


def test_assign_follows_the_peak_list_and_its_metadata() -> None:
    pl = PeakList([1738.0, 2970.0], [1.0, 0.3], meta=Metadata(state="gas"))
    out = bands.assign(pl)
    assert len(out) == 2
    assert "ketone C=O stretch" in _labels(out[0])
    assert bands.phase_of(pl) == "gas"
    assert bands.phase_of(PeakList([1715.0], [1.0], meta=Metadata(state="VAPOR"))) == "gas"
    assert bands.phase_of(PeakList([1715.0], [1.0])) == "condensed"


def test_assignment_to_dict_is_json_ready() -> None:
    a = bands.candidates(1715.0)[0]
    d = a.to_dict()
    assert set(d) == {"id", "group", "label", "score", "range_cm1", "kind"}
    assert isinstance(d["score"], float) and len(d["range_cm1"]) == 2


@pytest.mark.parametrize(
    "kwargs",
    [
        {"position_cm1": -1.0},
        {"position_cm1": math.nan},
        {"position_cm1": 1700.0, "strength": "huge"},
        {"position_cm1": 1700.0, "top": 0},
        {"position_cm1": 1700.0, "phase": "plasma"},
    ],
)
def test_bad_input_is_a_validation_error(kwargs) -> None:
    pos = kwargs.pop("position_cm1")
    with pytest.raises(ValidationError):
        bands.candidates(pos, **kwargs)


def test_other_bands_of_the_spectrum_corroborate_a_reading() -> None:
    """An ester shows a strong C-O band near 1240 beside its C=O (from memory): with that band
    in the same spectrum, a 1745 band reads as an ester before a cyclopentanone."""
    alone = bands.candidates(1745.0, strength="vs", support=[1745.0])
    with_co = bands.candidates(1745.0, strength="vs", support=[1745.0, 1240.0])
    ester = {a.id: a.score for a in with_co}["ester_co"]
    assert ester > {a.id: a.score for a in alone}.get("ester_co", 0.0)
    assert with_co[0].id == "ester_co"


def test_hydrogen_bonded_forms_are_not_read_in_the_gas_phase() -> None:
    """Gas-phase alcohols show free O-H only (common practice, no source)."""
    condensed = [a.id for a in bands.candidates(3350.0, broad=True, top=10)]
    gas = [a.id for a in bands.candidates(3350.0, broad=True, top=10, phase="gas")]
    assert "alcohol_oh_hbond" in condensed and "alcohol_oh_hbond" not in gas


def test_describe_all_uses_the_metadata_phase() -> None:
    """Acetone vapour's carbonyl near 1738 (from memory) reads as a ketone only in the gas."""
    gas = PeakList([1217.0, 1738.0], [0.7, 1.0], meta=Metadata(state="gas"))
    liquid = PeakList([1217.0, 1738.0], [0.7, 1.0])
    assert "ketone C=O?" in bands.describe_all(gas)[1]
    assert "ketone C=O?" not in bands.describe_all(liquid)[1]
    assert len(bands.describe_all(gas)) == len(gas)
