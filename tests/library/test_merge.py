"""reflib merge: one transaction, SHA-256 duplicates skipped, InChIKey/name matching, conflicts,
provenance, idempotence, the other file never written.

Band positions are condensed-phase values of real compounds from memory (typical handbook
values); they exercise the mechanics of merging, not search accuracy.
"""

import hashlib
import json
import sqlite3

import numpy as np
import pytest

from reflib.errors import LibraryError
from reflib.library import Library
from reflib.spectrum import Metadata, PeakList

ACETONE = ([3005, 2925, 1715, 1420, 1365, 1220, 1092, 530], "CC(C)=O")
ETHYL_ACETATE = ([2985, 2940, 1740, 1445, 1375, 1240, 1048, 938, 848], "CCOC(C)=O")
ETHANOL = ([3340, 2975, 2930, 1380, 1090, 1050, 880], "CCO")
BENZONITRILE = ([3065, 2230, 1600, 1490, 1450, 760, 690, 550], "N#Cc1ccccc1")


def _pl(pos, sha):
    n = len(pos)
    return PeakList(
        np.array(pos, float),
        np.linspace(1.0, 0.2, n),
        meta=Metadata(sha256=sha, source_file=f"{sha}.jdx"),
    )


def _add(lib, name, bands, sha, operator="A. Okafor", smiles=True, **kw):
    return lib.add(
        _pl(bands[0], sha), name=name, smiles=bands[1] if smiles else None, prep="film",
        operator=operator, check_similar=False, **kw,
    )  # fmt: skip


def _sha(path):
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.fixture()
def two(tmp_path):
    a = Library.create(tmp_path / "a.sqlite")
    b = Library.create(tmp_path / "b.sqlite")
    _add(a, "acetone", ACETONE, "s1")
    _add(a, "ethanol", ETHANOL, "s2")
    _add(b, "acetone", ACETONE, "s1", operator="M. Lindqvist")  # same file: skipped
    _add(b, "propanone", ACETONE, "s3", operator="M. Lindqvist")  # same InChIKey, other name
    _add(b, "ethyl acetate", ETHYL_ACETATE, "s4", operator="M. Lindqvist")  # new compound
    b.close()
    yield a, tmp_path / "b.sqlite"
    a.close()


def test_merge_counts_matching_and_provenance(two):
    a, other = two
    rep = a.merge(other, operator="integrator")
    assert rep.conflicts == []
    assert rep.spectra_skipped == 1 and rep.spectra_added == 2
    assert rep.compounds_added == 1 and rep.compounds_matched == 1  # propanone -> acetone
    assert rep.before["spectra"] == 2 and rep.after["spectra"] == 4
    assert rep.after["compounds"] == 3
    acetone = a.show("acetone")
    assert len(acetone["spectra"]) == 2
    rows = a.store.conn.execute(
        "SELECT operator, source_library, added_at FROM spectra WHERE sha256 = 's3'"
    ).fetchall()
    assert rows[0][0] == "M. Lindqvist" and "b.sqlite" in rows[0][1] and rows[0][2]
    assert a.show("ethyl acetate")["added_by"] == "M. Lindqvist"
    hist = a.history("ethyl acetate")
    assert [h["action"] for h in hist] == ["merge"] and hist[0]["operator"] == "integrator"
    # the merged spectra are searchable at once
    res = a.search(_pl(ETHYL_ACETATE[0], None), prep="film", top=2)
    assert res.hits[0].name == "ethyl acetate"


def test_merging_twice_changes_nothing_and_other_is_untouched(two):
    a, other = two
    before = _sha(other)
    a.merge(other)
    snapshot = {t: a.store.conn.execute(f"SELECT COUNT(*) FROM {t}").fetchone()[0]
                for t in ("compounds", "spectra", "peaks", "vectors")}  # fmt: skip
    rep2 = a.merge(other)
    assert rep2.spectra_added == 0 and rep2.compounds_added == 0 and rep2.spectra_skipped == 3
    again = {t: a.store.conn.execute(f"SELECT COUNT(*) FROM {t}").fetchone()[0]
             for t in snapshot}  # fmt: skip
    assert again == snapshot
    assert _sha(other) == before


def test_name_with_other_structure_is_a_conflict_and_nothing_of_it_is_merged(tmp_path):
    a = Library.create(tmp_path / "a.sqlite")
    b = Library.create(tmp_path / "b.sqlite")
    _add(a, "compound 7", BENZONITRILE, "x1")
    _add(b, "compound 7", ACETONE, "x2")  # same label, other structure
    _add(b, "ethanol", ETHANOL, "x3")
    b.close()
    rep = a.merge(tmp_path / "b.sqlite")
    assert [c["name"] for c in rep.conflicts] == ["compound 7"]
    assert rep.conflicts[0]["spectra_not_merged"] == 1
    assert a.store.spectrum_by_sha("x2") is None  # nothing of the conflicting compound
    assert a.store.spectrum_by_sha("x3") is not None  # the rest is merged
    a.close()


def test_name_match_without_structure_on_one_side(tmp_path):
    a = Library.create(tmp_path / "a.sqlite")
    b = Library.create(tmp_path / "b.sqlite")
    _add(a, "ethanol", ETHANOL, "e1", smiles=False)
    _add(b, "ethanol", ETHANOL, "e2")
    b.close()
    rep = a.merge(tmp_path / "b.sqlite")
    assert rep.compounds_matched == 1 and rep.compounds_added == 0 and rep.spectra_added == 1
    a.close()


def test_other_library_is_opened_read_only(two, monkeypatch):
    a, other = two
    from reflib.library import merge as merge_mod

    conn = merge_mod.open_read_only(other)
    with pytest.raises(sqlite3.OperationalError, match="readonly"):
        conn.execute("DELETE FROM compounds")
    conn.close()


def test_a_failing_merge_leaves_the_library_as_it_was(two, monkeypatch):
    a, other = two
    from reflib.library import merge as merge_mod

    before = a.store.counts()
    calls = {"n": 0}
    real = merge_mod.check_storable

    def boom(*args):
        calls["n"] += 1
        if calls["n"] == 2:
            raise LibraryError("disk full (simulated)")
        return real(*args)

    monkeypatch.setattr(merge_mod, "check_storable", boom)
    with pytest.raises(LibraryError, match="simulated"):
        a.merge(other)
    assert a.store.counts() == before


def test_not_a_library_and_self_merge(two, tmp_path):
    a, _ = two
    junk = tmp_path / "junk.sqlite"
    junk.write_bytes(b"not sqlite at all" * 100)
    with pytest.raises(LibraryError, match="not a reflib library"):
        a.merge(junk)
    with pytest.raises(LibraryError, match="itself"):
        a.merge(a.path)
    with pytest.raises(LibraryError, match="no library file"):
        a.merge(tmp_path / "missing.sqlite")


def test_cli_merge_exit_status_and_json(tmp_path):
    from typer.testing import CliRunner

    from reflib.cli import app

    a = Library.create(tmp_path / "a.sqlite")
    b = Library.create(tmp_path / "b.sqlite")
    _add(a, "compound 7", BENZONITRILE, "x1")
    _add(b, "compound 7", ACETONE, "x2")
    a.close()
    b.close()
    r = CliRunner().invoke(
        app, ["merge", str(tmp_path / "b.sqlite"), "-L", str(tmp_path / "a.sqlite"), "--json"]
    )
    assert r.exit_code == 1, r.output
    assert json.loads(r.output)["conflicts"][0]["name"] == "compound 7"


def test_merge_keeps_the_authors_band_labels(tmp_path):
    """A typed band's assignment ("C=O") travels with the spectrum into the other library."""
    a = Library.create(tmp_path / "a.sqlite")
    b = Library.create(tmp_path / "b.sqlite")
    labels = [None] * len(ETHYL_ACETATE[0])
    labels[2], labels[5] = "C=O", "C-O"
    pl = PeakList(
        np.array(ETHYL_ACETATE[0], float),
        np.linspace(1.0, 0.2, len(labels)),
        meta=Metadata(sha256="s9", source_file="s9.txt"),
        labels=labels,
    )
    b.add(pl, name="ethyl acetate", prep="film", check_similar=False)
    b.close()
    a.merge(tmp_path / "b.sqlite")
    sid = a.store.spectra_of(a.store.find_compound("ethyl acetate")["id"])[0]["id"]
    got = a.store.peaks_of(int(sid))
    assert dict(zip(got.positions.tolist(), got.labels)) == dict(
        zip([float(p) for p in ETHYL_ACETATE[0]], labels)
    )
    a.close()
