"""Group analysis (reflib.chem.groups) on synthetic condensed-phase peak lists.

Positions are typical condensed-phase values from a handbook correlation table, from memory:
ketone C=O 1715; ester C=O 1735-1750 with C-O 1300-1000; aldehyde C=O 1725 with the C-H doublet
2820/2720; carboxylic acid C=O 1710 with O-H 3300-2500; amide C=O 1690-1630; nitrile 2260-2220;
terminal alkyne 3300/2120 (bend near 630); nitro 1550/1350.
"""

from __future__ import annotations

import numpy as np
import pytest

from reflib.chem import groups
from reflib.errors import ValidationError
from reflib.spectrum import Metadata, PeakList

ALKYL = [(2960, 0.5), (2870, 0.3), (1460, 0.3), (1375, 0.25)]


def _pl(bands, broad=(), formula=None, prep=()):
    bands = sorted(bands)
    pos = np.array([b[0] for b in bands], float)
    inten = np.array([b[1] for b in bands], float)
    flags = np.array([round(b[0]) in broad for b in bands])
    widths = np.where(flags, 400.0, 15.0)
    meta = Metadata(prep=list(prep))
    if formula:
        meta.extra["MOLFORM"] = formula
    return PeakList(pos, inten, widths=widths, broad=flags, meta=meta)


COVER = (400.0, 4000.0)


def _calls(pl, **kw):
    rep = groups.analyse(pl, covered=COVER, **kw)
    return {c.group: c.call for c in rep.groups}, rep


def test_ketone_1715_alone_is_a_ketone_not_an_ester() -> None:
    calls, _ = _calls(_pl([*ALKYL, (1715, 1.0), (1220, 0.3)]))
    assert calls["ketone"] == "present" and calls["carbonyl"] == "present"
    assert calls["ester"] != "present" and calls["aldehyde"] != "present"


def test_ester_needs_the_strong_c_o_pair() -> None:
    calls, _ = _calls(_pl([*ALKYL, (1742, 1.0), (1240, 0.9), (1050, 0.5)]))
    assert calls["ester"] == "present"
    assert calls["ketone"] == "possible"  # the C=O band is the ester's: one band, one class
    assert calls["ether"] != "present"
    calls, _ = _calls(_pl([*ALKYL, (1742, 1.0)]))
    assert calls["ester"] == "absent"  # no strong band at 1300-1150 in a list that shows them
    calls, _ = _calls(_pl([*ALKYL, (1742, 1.0), (1240, 0.3)]))
    assert calls["ester"] != "present"  # the C-O band of an ester is as strong as its C=O


def test_aldehyde_needs_the_c_h_doublet() -> None:
    calls, _ = _calls(_pl([*ALKYL, (1725, 1.0), (2820, 0.15), (2720, 0.15)]))
    assert calls["aldehyde"] == "present" and calls["ketone"] == "possible"
    calls, _ = _calls(_pl([*ALKYL, (1725, 1.0)]))
    assert calls["aldehyde"] == "possible" and calls["ketone"] == "present"


def test_acid_needs_the_very_broad_o_h() -> None:
    calls, _ = _calls(_pl([*ALKYL, (1710, 1.0), (3000, 0.6), (1290, 0.4)], broad={3000}))
    assert calls["carboxylic acid"] == "present"
    assert calls["ketone"] == "possible" and calls["alcohol"] != "present"


def test_amide_nitrile_alkyne_nitro() -> None:
    calls, _ = _calls(_pl([*ALKYL, (1660, 1.0), (3350, 0.4), (1550, 0.5)], formula="C3H7NO"))
    assert calls["amide"] == "present"
    calls, _ = _calls(_pl([*ALKYL, (2250, 0.3)]))
    assert calls["nitrile"] == "present"
    calls, _ = _calls(_pl([*ALKYL, (3300, 0.6), (2120, 0.05), (630, 0.6)]))
    assert calls["alkyne"] == "present"
    calls, _ = _calls(_pl([(3300, 0.6), (630, 0.6)]))  # no C#C: not enough
    assert calls["alkyne"] == "possible"
    calls, _ = _calls(_pl([*ALKYL, (1550, 1.0), (1350, 0.8)]))
    assert calls["nitro"] == "present"
    calls, _ = _calls(_pl([*ALKYL, (1550, 1.0), (1350, 0.1)]))  # both must be strong
    assert calls["nitro"] != "present"


def test_absent_only_where_the_window_is_visible() -> None:
    # the weak 800 band shows the list goes down to 1 %: a missing strong band then means something
    pl = _pl([*ALKYL, (1100, 1.0), (800, 0.01)])
    calls, _ = _calls(pl)
    assert calls["carbonyl"] == "absent" and calls["nitrile"] == "absent"
    rep = groups.analyse(pl, covered=(400.0, 1600.0))  # C=O window not measured
    assert rep.call("carbonyl").call == "possible"
    assert groups.analyse(_pl([*ALKYL, (1100, 1.0)]), covered=COVER).call("carbonyl").call == (
        "possible"
    )  # only strong bands listed: a weak C=O may have been left out
    rep = groups.analyse(pl, covered=COVER, noise=0.2)  # too noisy to miss a nitrile
    assert rep.call("nitrile").call == "possible"


def test_overtone_of_c_o_is_not_an_n_h_or_o_h() -> None:
    _, rep = _calls(_pl([*ALKYL, (1715, 1.0), (3420, 0.04)]))
    assert "overtone" in rep.explained[3420.0]
    labels = dict(zip(rep.explained, rep.explained.values()))
    assert labels
    assert rep.call("amine").call != "present" and rep.call("alcohol").call != "present"


def test_gas_phase_moves_the_carbonyl_up() -> None:
    pl = _pl([*ALKYL, (1738, 1.0), (1220, 0.3)])
    assert groups.analyse(pl, covered=COVER, phase="gas").call("ketone").call == "present"
    # the same 1738 band in a condensed spectrum is outside the open-chain ketone's 1705-1725
    # but inside the ketone row's wider 1660-1755 class window, so it still reads as a ketone
    assert groups.analyse(pl, covered=COVER).call("carbonyl").call == "present"


def test_formula_removes_groups_needing_absent_elements() -> None:
    pl = _pl([*ALKYL, (1715, 1.0), (1369, 0.6), (1220, 0.4), (650, 0.5), (1034, 0.5)])
    rep = groups.analyse(pl, covered=COVER, formula="C3H6O")
    for name in ("nitro", "amine", "amide", "C-Cl", "C-Br", "nitrile"):
        assert rep.call(name).call == "absent", name
    text = " ".join(" ".join(lab) for lab in groups.band_labels(pl, rep)).lower()
    for word in ("nitro", "sulfoxide", "phosphoryl", "c-br", "c-cl", "c-s", "oxime", "amine"):
        assert word not in text, word


def test_halogen_needs_the_formula() -> None:
    pl = _pl([*ALKYL, (750, 1.0)])
    assert groups.analyse(pl, covered=COVER).call("C-Cl").call == "possible"
    assert groups.analyse(pl, covered=COVER, formula="C2H5Cl").call("C-Cl").call == "present"


def test_structure_limits_labels_to_its_own_groups() -> None:
    pl = _pl([*ALKYL, (1742, 1.0), (1240, 0.9), (1050, 0.5), (750, 0.4)])
    labels = groups.band_labels(pl, structure_ids=["alkyl_ch", "ester"])
    flat = " ".join(" ".join(lab) for lab in labels)
    assert "ester C=O" in flat and "C-Cl" not in flat and "ketone" not in flat


def test_bad_formula_is_a_clear_error() -> None:
    with pytest.raises(ValidationError, match="unknown element"):
        groups.formula_elements("C8H8Qq")
    with pytest.raises(ValidationError, match="names no element"):
        groups.formula_elements("123")


def test_report_json_shape() -> None:
    d = groups.analyse(_pl([*ALKYL, (1715, 1.0)]), covered=COVER).to_dict()
    assert set(d) >= {"query", "groups", "quality", "caution"}
    assert [g["group"] for g in d["groups"]] == groups.names()
    g = d["groups"][0]
    assert set(g) >= {"group", "call", "score", "evidence", "against"}
    assert g["call"] in groups.CALLS and 0 <= g["score"] <= 1
    assert "not a structure proof" in d["caution"]


def test_vocabulary_covers_the_issue_list_and_every_rule_has_a_source() -> None:
    wanted = (
        "carbonyl ketone aldehyde ester|carboxylic acid|amide anhydride|acid chloride|alcohol "
        "phenol amine nitrile alkyne alkene aromatic ether epoxide nitro C-F C-Cl C-Br C-I"
    )
    names = set(groups.names())
    for chunk in wanted.split("|"):
        for n in chunk.split() if " " in chunk and chunk not in names else [chunk]:
            assert n in names or chunk in names, n
    assert "alkyl C-H" in names
    assert all(r.source for r in groups.rules())


def test_strong_band_on_a_weak_preparation_band_is_the_sample_s() -> None:
    """KBr's absorbed water bends near 1635 (weak); an amide I band there is the sample's."""
    pl = _pl(
        [(3300, 0.5), (3060, 0.15), (1660, 1.0), (1550, 0.9), (1600, 0.5), (1500, 0.4),
         (830, 0.8), (2960, 0.2), (1370, 0.4), (800, 0.01)],
        prep=("kbr",),
    )  # fmt: skip
    rep = groups.analyse(pl, covered=COVER)
    assert 1660.0 not in rep.explained
    assert rep.call("amide").call == "present"
    assert rep.call("nitro").call != "present"  # 1550 is the amide II band
    assert rep.call("alcohol").call != "present"  # 3300 is the amide's N-H


def test_mull_oil_regions_give_no_evidence() -> None:
    pl = _pl([(2924, 1.0), (2853, 0.7), (1462, 0.4), (1715, 0.8), (800, 0.01)], prep=("nujol",))
    rep = groups.analyse(pl, covered=COVER)
    assert "preparation" in rep.explained[2924.0]
    assert rep.call("alkyl C-H").call != "present"
    assert rep.call("ketone").call == "present"


def test_labels_of_some_bands_are_those_of_the_full_labelling() -> None:
    """Labelling only some bands (what a search report needs) gives those bands the labels the
    full labelling gives them: the other bands still corroborate (ester C=O 1742 with C-O 1240,
    handbook values from memory)."""
    pl = _pl([*ALKYL, (1742, 1.0), (1240, 0.9), (1050, 0.5), (750, 0.4), (3400, 0.3)])
    full = groups.band_labels(pl)
    some = groups.band_labels(pl, only=[1742.0, 750.0])
    pos = pl.positions.tolist()
    for p, a, b in zip(pos, full, some):
        assert b == (a if p in (1742.0, 750.0) else []), p
    assert any("ester" in t for t in some[pos.index(1742.0)])


def test_no_carbonyl_compound_label_without_its_c_o_band() -> None:
    """An anilide (amide I near 1665, amide II near 1550, N-H near 3300; handbook values from
    memory) has a band near 1290 in the C-O range of carbonates, esters, anhydrides and acids:
    with no band where their C=O would be (1700-1850), it is named as none of them."""
    pl = _pl(
        [(3295, 0.5), (3060, 0.2), (1665, 1.0), (1600, 0.7), (1550, 0.8), (1500, 0.6)]
        + [(1440, 0.5), (1370, 0.4), (1290, 0.5), (755, 0.7), (695, 0.6)]
    )
    rep = groups.analyse(pl, covered=COVER)
    labels = dict(zip(pl.positions.tolist(), groups.band_labels(pl, rep)))
    text = " ".join(labels[1290.0]).lower()
    for name in ("carbonate", "ester", "anhydride", "acid"):
        assert name not in text, labels[1290.0]


def test_weak_band_in_the_c_o_region_of_a_compound_without_carbonyl() -> None:
    """A secondary alcohol (O-H near 3350 broad, C-O near 1100; handbook values from memory)
    with a weak 1715 band, as from leftover ketone after a reduction: the band is offered as a
    minor component's C=O. In the ketone itself (strong 1715) it is the ketone's own C=O."""
    alcohol = [*ALKYL, (3350, 0.6), (1100, 0.8), (1050, 0.5)]
    pl = _pl([*alcohol, (1715, 0.1)], broad=(3350,))
    rep = groups.analyse(pl, covered=COVER)
    assert rep.call("carbonyl").call == "absent"
    labels = dict(zip(pl.positions.tolist(), groups.band_labels(pl, rep)))
    assert groups.MINOR_CO_LABEL in labels[1715.0]
    assert not any(groups.MINOR_CO_LABEL in v for k, v in labels.items() if k != 1715.0)
    ketone = _pl([*ALKYL, (1715, 1.0), (1365, 0.5), (1220, 0.4)])
    klabels = groups.band_labels(ketone)
    assert not any(groups.MINOR_CO_LABEL in v for v in klabels)


def test_a_weak_band_read_as_an_overtone_is_not_also_a_minor_c_o() -> None:
    """An aromatic alcohol's weak bands between 1650 and 2000 cm-1 are the ring's overtone and
    combination bands (handbook, from memory): not offered as another compound's C=O."""
    pl = _pl(
        [*ALKYL, (3350, 0.6), (3030, 0.2), (1600, 0.6), (1500, 0.7), (1100, 0.8), (750, 0.9)]
        + [(1950, 0.04), (1870, 0.03), (1790, 0.03)],
        broad=(3350,),
    )
    labels = groups.band_labels(pl)
    for pos, lab in zip(pl.positions.tolist(), labels):
        if any("overtone" in t for t in lab):
            assert groups.MINOR_CO_LABEL not in lab, (pos, lab)


def test_carboxylate_named_only_beside_its_strong_band_and_without_a_carbonyl() -> None:
    """A carboxylate salt's asymmetric CO2- stretch (1540-1650) is one of its strongest bands,
    the symmetric one lies at 1360-1450, and a salt has no C=O stretch (handbook values from
    memory: sodium acetate near 1580 vs and 1415 s). An aromatic alcohol's ring bands (1600 m,
    1575 w) and methyl bend (1370) are not read as a carboxylate's, nor an anilide's amide II
    (1550) and its 1370 band; the salt's bands are."""

    def named(pl, pos):
        return " ".join(dict(zip(pl.positions.tolist(), groups.band_labels(pl)))[pos]).lower()

    alcohol = _pl(
        [*ALKYL, (3350, 0.4), (3030, 0.1), (1603, 0.36), (1574, 0.18), (1498, 0.34)]
        + [(1437, 0.07), (1369, 0.28), (1108, 1.0), (1014, 0.5), (829, 0.6)],
        broad=(3350,),
    )
    for pos in (1574.0, 1437.0, 1369.0):
        assert "carboxylate" not in named(alcohol, pos), pos
    anilide = _pl(
        [(3295, 0.5), (3060, 0.2), (1665, 1.0), (1600, 0.7), (1550, 0.8), (1500, 0.6)]
        + [(1440, 0.5), (1370, 0.4), (1290, 0.5), (755, 0.7), (695, 0.6)]
    )
    for pos in (1550.0, 1370.0):
        assert "carboxylate" not in named(anilide, pos), pos
    salt = _pl([*ALKYL, (1580, 1.0), (1415, 0.7), (1020, 0.1), (925, 0.1), (650, 0.3)])
    assert any("carboxylate" in named(salt, p) for p in (1375.0, 1415.0, 1580.0))


def test_possible_group_not_named_when_its_key_band_is_a_present_groups() -> None:
    """An aryl amide (N-H near 3295, amide I near 1660, amide II near 1550; handbook values from
    memory) with bands near 1380 and 1015: its amide II band is where a nitro's asymmetric
    NO2 stretch would be and its N-H where an alcohol's O-H would be, so neither a nitro nor an
    alcohol is named at its other band. Nitrobenzene (NO2 near 1525 and 1348, from memory)
    still reads as a nitro compound."""
    amide = _pl(
        [(3295, 0.6), (3060, 0.2), (1660, 1.0), (1600, 0.6), (1550, 0.95), (1500, 0.35)]
        + [(1380, 0.5), (1015, 0.7), (830, 0.9), (730, 0.4)],
        broad=(3295,),
    )
    rep = groups.analyse(amide, covered=COVER)
    assert rep.call("amide").call == "present"
    labels = dict(zip(amide.positions.tolist(), groups.band_labels(amide, rep)))
    assert not any("nitro" in t.lower() for v in labels.values() for t in v), labels
    assert not any("alcohol" in t.lower() for t in labels[1015.0]), labels[1015.0]
    nitro = _pl([(3080, 0.2), (1605, 0.4), (1525, 1.0), (1480, 0.3), (1348, 0.95), (850, 0.5)])
    nlabels = " ".join(t for v in groups.band_labels(nitro) for t in v).lower()
    assert "nitro" in nlabels


def test_a_very_weak_band_in_the_c_o_region_does_not_show_a_carbonyl_compound() -> None:
    """The anilide above with an aromatic ring's very weak combination band near 1790 (from
    memory: 2000-1650 cm-1, far weaker than the ring stretches): its 1290 band is still named
    as no carbonate, ester, anhydride or acid, whose C=O stretch is a strong band."""
    pl = _pl(
        [(3295, 0.5), (3060, 0.2), (1790, 0.04), (1665, 1.0), (1600, 0.7), (1550, 0.8)]
        + [(1500, 0.6), (1440, 0.5), (1370, 0.4), (1290, 0.5), (755, 0.7), (695, 0.6)]
    )
    labels = dict(zip(pl.positions.tolist(), groups.band_labels(pl)))
    text = " ".join(labels[1290.0]).lower()
    for name in ("carbonate", "ester", "anhydride", "acid"):
        assert name not in text, labels[1290.0]


def test_weak_band_in_the_c_o_region_of_an_aromatic_alcohol_is_a_minor_c_o() -> None:
    """An aromatic alcohol (from memory: O-H near 3350 broad, ring stretches 1600 and 1500, C-O
    near 1100) with a weak (not very weak) band at 1680, as from a leftover aryl ketone: the
    band is offered as a minor component's C=O, not read as the ring's overtone pattern, which
    is very weak."""
    pl = _pl(
        [*ALKYL, (3350, 0.4), (3030, 0.1), (1680, 0.11), (1603, 0.36), (1498, 0.34)]
        + [(1108, 1.0), (1014, 0.5), (829, 0.6)],
        broad=(3350,),
    )
    labels = dict(zip(pl.positions.tolist(), groups.band_labels(pl)))
    assert groups.MINOR_CO_LABEL in labels[1680.0], labels[1680.0]
    assert not any("overtone" in t for t in labels[1680.0]), labels[1680.0]
