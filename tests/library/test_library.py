"""Library API: add, duplicate refusal, search, list/show/remove, reindex.

Peak lists here are condensed-phase band positions of real compounds, from memory
(typical handbook values); they exercise the mechanics, not the accuracy (see tests/outside/).
"""

import numpy as np
import pytest

from reflib.analysis.encode import Encoding
from reflib.errors import NotFoundError, ValidationError
from reflib.library import Library
from reflib.spectrum import Metadata, PeakList

# band positions (cm-1) and rough relative intensities, from memory
ACETONE = (
    [3005, 2925, 1715, 1420, 1365, 1220, 1092, 530],
    [0.1, 0.1, 1.0, 0.4, 0.6, 0.7, 0.1, 0.2],
)
ETHYL_ACETATE = (
    [2985, 2940, 1740, 1445, 1375, 1240, 1048, 938, 848],
    [0.2, 0.1, 1.0, 0.2, 0.4, 0.95, 0.6, 0.2, 0.1],
)
ETHANOL = ([3340, 2975, 2930, 1380, 1090, 1050, 880], [0.8, 0.5, 0.3, 0.2, 0.5, 1.0, 0.4])
BENZONITRILE = (
    [3065, 2230, 1600, 1490, 1450, 760, 690, 550],
    [0.1, 0.6, 0.2, 0.5, 0.4, 1.0, 0.9, 0.5],
)


def _pl(bands, *, sha=None, broad_above=None):
    pos, inten = bands
    broad = [broad_above is not None and p > broad_above for p in pos]
    widths = [200.0 if b else np.nan for b in broad]
    return PeakList(
        np.array(pos, float),
        np.array(inten, float),
        widths=widths,
        broad=broad,
        meta=Metadata(sha256=sha),
    )


@pytest.fixture()
def lib(tmp_path):
    lib = Library.create(tmp_path / "lib.sqlite")
    lib.add(_pl(ACETONE, sha="a" * 64), name="acetone", role="solvent", prep="film")
    lib.add(_pl(ETHYL_ACETATE), name="ethyl acetate", role="solvent", prep="film")
    lib.add(_pl(ETHANOL, broad_above=3000), name="ethanol", role="solvent", prep="film")
    lib.add(_pl(BENZONITRILE), name="benzonitrile", role="starting material", smiles="N#Cc1ccccc1")
    yield lib
    lib.close()


def test_search_finds_the_compound_and_explains_it(lib):
    pos, inten = ETHYL_ACETATE
    q = PeakList(np.array(pos) + 3.0, np.array(inten) * 0.9)
    res = lib.search(q, top=3)
    assert res.hits[0].name == "ethyl acetate"
    assert res.hits[0].score > 0.8 > res.hits[1].score
    assert len(res.hits[0].matched) >= 7
    d = res.to_dict()
    assert set(d) >= {"query", "verdict", "hits", "masked"}
    assert d["hits"][0]["rank"] == 1 and 0 <= d["hits"][0]["score"] <= 1
    # the air is always masked: CO2 near 2350 cm-1 (common practice, no source)
    assert any(lo <= 2350 <= hi for lo, hi, _ in res.masked)


def test_new_band_is_reported(lib):
    pos, inten = ACETONE
    q = PeakList(np.array([*pos, 2230.0]), np.array([*inten, 0.8]))
    hit = lib.search(q).hits[0]
    assert hit.name == "acetone"
    assert any(abs(n - 2230) < 1 for n in hit.new)


def test_missing_band_is_reported(lib):
    pos, inten = BENZONITRILE
    keep = [i for i, p in enumerate(pos) if p != 2230]
    q = PeakList(np.array(pos)[keep], np.array(inten)[keep])
    hit = lib.search(q).hits[0]
    assert hit.name == "benzonitrile"
    assert any(abs(m - 2230) < 1 for m in hit.missing)


def test_unrelated_query_is_not_confident(lib):
    # nitromethane-like bands (1560, 1380 strong), from memory: nothing like it in the library
    q = PeakList(
        np.array([3050.0, 1560.0, 1400.0, 1380.0, 920.0, 660.0]),
        np.array([0.1, 1.0, 0.3, 0.8, 0.3, 0.4]),
    )
    assert lib.search(q).verdict != "confident"


def test_exact_duplicate_file_is_refused_unless_forced(lib):
    with pytest.raises(ValidationError, match="already in the library"):
        lib.add(_pl(ACETONE, sha="a" * 64), name="acetone again")
    res = lib.add(_pl(ACETONE, sha="a" * 64), name="acetone", force=True, check_similar=False)
    assert not res.new_compound


def test_same_spectrum_under_another_name_warns(lib):
    res = lib.add(_pl(ETHYL_ACETATE), name="EtOAc lot 7")
    assert res.warnings and "ethyl acetate" in res.warnings[0]


def test_second_spectrum_joins_the_compound(lib):
    res = lib.add(_pl(ACETONE), name="Acetone", prep="kbr", check_similar=False)
    assert not res.new_compound
    c = lib.show("acetone")
    assert len(c["spectra"]) == 2
    assert c["spectra"][1]["prep"] == ["kbr"]


def test_list_show_remove(lib):
    names = [c["name"] for c in lib.compounds()]
    assert names == ["acetone", "benzonitrile", "ethanol", "ethyl acetate"]
    assert [c["name"] for c in lib.compounds(role="starting material")] == ["benzonitrile"]
    rev = lib.revision
    out = lib.remove("ethanol")
    assert out["spectra"] == 1 and lib.revision == rev + 1
    with pytest.raises(NotFoundError):
        lib.show("ethanol")
    assert all(h.name != "ethanol" for h in lib.search(_pl(ETHANOL, broad_above=3000)).hits)


def test_bad_arguments_are_clear(lib):
    with pytest.raises(ValidationError, match="name"):
        lib.add(_pl(ACETONE), name="  ")
    with pytest.raises(ValidationError, match="valid"):
        lib.search(_pl(ACETONE), prep="nujoll")
    with pytest.raises(ValidationError, match="top"):
        lib.search(_pl(ACETONE), top=0)


def test_reindex_with_new_encoding_keeps_ranking(lib):
    n = lib.reindex(Encoding(bin_width=2.0, broadening=12.0))
    assert n == 4
    assert lib.encoding.bin_width == 2.0
    assert lib.search(_pl(ETHANOL, broad_above=3000)).hits[0].name == "ethanol"


def test_empty_library_gives_no_match(tmp_path):
    with Library.create(tmp_path / "empty.sqlite") as lib:
        res = lib.search(_pl(ACETONE))
    assert res.verdict == "no-match" and res.hits == []


def test_structure_is_stored_and_checked(lib):
    c = lib.show("benzonitrile")
    assert c["formula"] == "C7H5N" and c["inchikey"]
    # acetone's bands with ethanol's SMILES: the strong 1715 band is unexplained (from memory)
    res = lib.add(_pl(ACETONE), name="not ethanol", smiles="CCO", check_similar=False)
    assert any("1715" in w for w in res.warnings)
    with pytest.raises(ValidationError, match="strict"):
        lib.add(_pl(ACETONE), name="not ethanol 2", smiles="CCO", strict=True, check_similar=False)
    assert lib.store.compound_by_name("not ethanol 2") is None
    with pytest.raises(ValidationError, match="SMILES"):
        lib.add(_pl(ACETONE), name="bad", smiles="C1CC(", check_similar=False)


def test_new_bands_are_labelled_in_the_preparation_given_to_the_search(tmp_path):
    """A KBr pellet's absorbed water shows a weak band near 1635 cm-1 (common practice, no
    source). A query typed without a preparation and searched with --prep kbr: that band, new
    against the reference, is labelled as the pellet's, not as an alkene's C=C."""
    lib = Library.create(tmp_path / "kbr.sqlite")
    ref = PeakList(
        [2960.0, 2870.0, 1715.0, 1460.0, 1365.0, 1220.0],
        [0.5, 0.3, 1.0, 0.3, 0.4, 0.35],
        meta=Metadata(prep=["kbr"]),
    )
    lib.add(ref, name="a ketone", prep="kbr")
    q = PeakList(
        [2960.0, 2870.0, 1715.0, 1636.0, 1460.0, 1365.0, 1220.0],
        [0.5, 0.3, 1.0, 0.15, 0.3, 0.4, 0.35],
    )
    hit = lib.search(q, prep="kbr", top=1).hits[0]
    assert hit.new == [1636.0]
    assert "preparation (kbr)" in hit.annotations["1636.0"], hit.annotations
    lib.close()


def test_hits_below_the_printed_ones_are_explained_when_read_and_alike_either_way(lib):
    import copy
    import pickle

    from reflib.library.core import _explain_one
    from reflib.library.index import Group

    pos, inten = ACETONE
    # acetone with a nitrile band added; four compounds, so four hits
    q = PeakList(np.array([*pos, 2231.0]), np.array([*inten, 0.8]))
    res = lib.search(q, top=4)
    assert all("matched" in h.__dict__ for h in res.hits[:3])  # printed: explained at once
    second = res.hits[3]  # the fourth: explained when read
    assert "_fill" in second.__dict__ and "matched" not in second.__dict__
    clone = pickle.loads(pickle.dumps(copy.copy(second)))  # filled on the way (another process)
    assert "_fill" not in clone.__dict__
    # the fields read later are those an explanation made now gives
    ref = lib.store.peaks_of(second.spectrum_id)
    g = Group(tuple(second.prep), None, None, 0, 1)
    ex, _, _ = _explain_one(lib.encoding, q, ref, [], g, (None, None), None)
    assert second.matched == ex.matched == clone.matched
    assert second.missing == ex.missing and second.new == ex.new
    assert res.to_dict()["hits"][3]["matched"] == [
        [round(a, 1), round(b, 1)] for a, b in ex.matched
    ]
