"""The library file: schema, transactions, revision counter, versions."""

import sqlite3

import numpy as np
import pytest

from reflib.analysis.encode import encode
from reflib.errors import LibraryError, NotFoundError, ValidationError
from reflib.library.store import SCHEMA_VERSION, Store, normalise_role
from reflib.spectrum import Metadata, PeakList, Spectrum


def _peaks():
    return PeakList([1715.0, 2950.0, 1200.0], [1.0, 0.5, 0.3])


def test_create_open_and_refuse_overwrite(tmp_path):
    path = tmp_path / "lib.sqlite"
    Store.create(path).close()
    with pytest.raises(LibraryError, match="already exists"):
        Store.create(path)
    s = Store.open(path)
    assert s.get_meta("schema_version") == str(SCHEMA_VERSION)
    assert s.revision == 0
    s.close()


def test_missing_library_says_how_to_create_one(tmp_path):
    with pytest.raises(LibraryError, match="reflib init"):
        Store.open(tmp_path / "nope.sqlite")


def test_not_a_library(tmp_path):
    p = tmp_path / "other.sqlite"
    sqlite3.connect(p).execute("CREATE TABLE t(x)").connection.close()
    with pytest.raises(LibraryError, match="not a reflib library"):
        Store.open(p)
    q = tmp_path / "junk.sqlite"
    q.write_bytes(b"this is not sqlite at all" * 100)
    with pytest.raises(LibraryError):
        Store.open(q)


def test_newer_schema_is_refused(tmp_path):
    p = tmp_path / "lib.sqlite"
    s = Store.create(p)
    with s.write():
        s.set_meta("schema_version", str(SCHEMA_VERSION + 1))
    s.close()
    with pytest.raises(LibraryError, match="newer reflib"):
        Store.open(p)


def test_write_bumps_revision_and_rolls_back_on_error(tmp_path):
    s = Store.create(tmp_path / "lib.sqlite")
    with s.write():
        cid = s.insert_compound({"name": "a", "role": "other"})
    assert s.revision == 1
    peaks = _peaks()
    with pytest.raises(RuntimeError):
        with s.write():
            s.insert_spectrum(cid, peaks, peaks, encode(peaks), s.encoding.key(), prep=[])
            raise RuntimeError("power cut")
    assert s.revision == 1
    assert s.counts() == {"compounds": 1, "spectra": 0, "peaks": 0, "vectors": 0}


def test_spectrum_round_trip_with_full_arrays(tmp_path):
    s = Store.create(tmp_path / "lib.sqlite")
    x = np.linspace(400, 4000, 1801)
    y = np.exp(-(((x - 1715) / 8) ** 2))
    spec = Spectrum(x, y, "absorbance", Metadata(title="t", sha256="ab" * 32))
    peaks = _peaks()
    with s.write():
        cid = s.insert_compound({"name": "Ketone", "role": "product"})
        sid = s.insert_spectrum(cid, spec, peaks, encode(peaks), s.encoding.key(), prep=["film"])
    back = s.full_spectrum(sid)
    assert np.array_equal(back.x, x) and np.array_equal(back.y, y)
    pl = s.peaks_of(sid)
    assert np.allclose(pl.positions, peaks.positions)
    assert pl.meta.prep == ["film"]
    assert s.spectrum_by_sha("ab" * 32)["name"] == "Ketone"
    vs = s.load_vectors(s.encoding.key())
    assert vs.matrix.shape == (1, s.encoding.size)
    assert vs.preps == [("film",)]
    with pytest.raises(LibraryError, match="reindex"):
        s.load_vectors("other-key")


def test_peaks_of_many_reads_each_spectrum_as_peaks_of_does(tmp_path):
    """Several spectra's bands read in one go are those read one by one, each with its own
    preparation; an unknown id is refused (common practice, no source)."""
    s = Store.create(tmp_path / "lib.sqlite")
    lists = [
        PeakList([1715.0, 2950.0], [1.0, 0.4]),
        PeakList([3300.0, 1050.0, 2900.0], [0.8, 1.0, 0.5], widths=[250.0, 12.0, 15.0]),
        PeakList([], []),
    ]
    with s.write():
        cid = s.insert_compound({"name": "a", "role": "other"})
        sids = [
            s.insert_spectrum(cid, p, p, encode(p), s.encoding.key(), prep=[prep])
            for p, prep in zip(lists, ["film", "atr", "kbr"])
        ]
    many = s.peaks_of_many(reversed(sids))
    assert sorted(many) == sorted(sids)
    for sid, prep in zip(sids, ["film", "atr", "kbr"]):
        one = s.peaks_of(sid)
        assert many[sid].meta.prep == one.meta.prep == [prep]
        assert np.array_equal(many[sid].positions, one.positions)
        assert np.array_equal(many[sid].intensities, one.intensities)
        assert np.array_equal(many[sid].widths, one.widths, equal_nan=True)
    assert many[sids[1]].positions.tolist() == [1050.0, 2900.0, 3300.0]
    assert len(many[sids[2]]) == 0
    assert s.peaks_of_many([]) == {}
    with pytest.raises(NotFoundError, match="no spectrum"):
        s.peaks_of_many([sids[0], 999])


def test_find_compound_by_id_name_alias_and_case(tmp_path):
    s = Store.create(tmp_path / "lib.sqlite")
    with s.write():
        cid = s.insert_compound(
            {"name": "Benzil", "role": "other", "aliases": ["diphenylethanedione"]}
        )
    assert s.find_compound(cid)["name"] == "Benzil"
    assert s.find_compound(str(cid))["name"] == "Benzil"
    assert s.find_compound("benzil")["id"] == cid
    assert s.find_compound("Diphenylethanedione")["id"] == cid
    with pytest.raises(NotFoundError, match="reflib list"):
        s.find_compound("benzoin")


def test_names_are_unique_ignoring_case(tmp_path):
    s = Store.create(tmp_path / "lib.sqlite")
    with s.write():
        s.insert_compound({"name": "Benzil", "role": "other"})
    with pytest.raises(sqlite3.IntegrityError):
        with s.write():
            s.insert_compound({"name": "BENZIL", "role": "other"})


def test_roles():
    assert normalise_role("SM") == "starting material"
    assert normalise_role(None) == "other"
    with pytest.raises(ValidationError, match="use one of"):
        normalise_role("catalyst-ish")


def test_list_match_escapes_like_wildcards(tmp_path):
    s = Store.create(tmp_path / "lib.sqlite")
    with s.write():
        s.insert_compound({"name": "50% ester", "role": "other"})
        s.insert_compound({"name": "5 ester", "role": "other"})
    assert [r["name"] for r in s.list_compounds(match="0%")] == ["50% ester"]


def test_author_labels_are_stored_and_read_back(tmp_path):
    """Labels of a typed list (issue 18) go into peaks.label, through add and bulk add."""
    from reflib.io.peaktext import parse_peak_text
    from reflib.library import Library

    typed = "IR (film) 3400 (br, OH), 2960 (m), 1740 (vs, ester C=O), 1240 (s, C-O) cm-1"
    with Library.create(tmp_path / "lib.sqlite") as lib:
        first = lib.add(parse_peak_text(typed), name="ethyl lactate-ish", check_similar=False)
        lib.add_many([{"data": parse_peak_text(typed.replace("3400", "3410")), "name": "copy"}])
        for sid in (first.spectrum_id, first.spectrum_id + 1):
            back = lib.peaks(sid)
            assert back.labels == ["C-O", "ester C=O", None, "OH"]
        rows = lib.store.conn.execute(
            "SELECT position, label FROM peaks WHERE spectrum_id = ? ORDER BY position",
            (first.spectrum_id,),
        ).fetchall()
        assert rows == [(1240.0, "C-O"), (1740.0, "ester C=O"), (2960.0, None), (3400.0, "OH")]
        shown = lib.show("ethyl lactate-ish")["spectra"][0]["peaks"]
        assert [p.get("label") for p in shown] == ["OH", None, "ester C=O", "C-O"]
        lib.add(PeakList([1715.0], [1.0]), name="no labels", check_similar=False)
        assert lib.peaks(first.spectrum_id + 2).labels is None
