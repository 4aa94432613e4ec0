"""Bulk add writes exactly the rows Library.add writes, one transaction and revision per chunk.

Band positions are condensed-phase values of real compounds from memory (typical handbook
values); they exercise the mechanics, not the accuracy.
"""

import numpy as np
import pytest

from reflib.errors import ValidationError
from reflib.library import Library
from reflib.library.bulk import add_bulk
from reflib.spectrum import Metadata, PeakList, Spectrum

# band positions (cm-1) and rough relative intensities, from memory
BANDS = {
    "acetone": (
        [3005, 2925, 1715, 1420, 1365, 1220, 1092, 530],
        [0.1, 0.1, 1, 0.4, 0.6, 0.7, 0.1, 0.2],
    ),
    "ethanol": ([3340, 2975, 2930, 1380, 1090, 1050, 880], [0.8, 0.5, 0.3, 0.2, 0.5, 1.0, 0.4]),
    "benzonitrile": ([3065, 2230, 1600, 1490, 1450, 760, 690], [0.1, 0.6, 0.2, 0.5, 0.4, 1, 0.9]),
    "nujol-like": ([2953, 2924, 2853, 1462, 1377, 722], [0.7, 1.0, 0.8, 0.4, 0.3, 0.1]),
}


def _items():
    """A mix: new names, a repeated name (second spectrum), an alias, a role change, a
    broad band with a width, a file hash, a full spectrum, preparations from meta and args."""
    pos, inten = BANDS["ethanol"]
    ethanol = PeakList(
        np.array(pos, float),
        np.array(inten, float),
        widths=[250.0] + [np.nan] * 6,
        broad=[True] + [False] * 6,
        meta=Metadata(sha256="ab" * 32, source_file="etoh.csv", prep=["film"]),
    )
    x = np.linspace(600.0, 3600.0, 1501)
    y = np.exp(-0.5 * ((x - 1715.0) / 6.0) ** 2) + 0.4 * np.exp(-0.5 * ((x - 1220.0) / 8.0) ** 2)
    spectrum = Spectrum(x, y, "absorbance", Metadata(title="acetone film", resolution=4.0))
    pl = {k: PeakList(np.array(p, float), np.array(i, float)) for k, (p, i) in BANDS.items()}
    return [
        {"data": pl["acetone"], "name": "acetone", "prep": "kbr", "role": "solvent"},
        {"data": ethanol, "name": "Ethanol", "aliases": ["EtOH"], "notebook": "NB-7 p12"},
        {"data": pl["benzonitrile"], "name": "benzonitrile", "prep": ["chcl3", "nacl"]},
        {"data": pl["nujol-like"], "name": "ACETONE", "note": "second prep", "prep": "nujol"},
        {"data": spectrum, "name": "etoh", "operator": "kb", "role": "reagent"},
        {"data": pl["acetone"], "name": "acetone", "role": "product", "prep": "atr"},
    ]


def _rows(lib):
    """Every row of the four data tables, without the wall-clock stamps."""
    conn = lib.store.conn
    out = {}
    for table in ("compounds", "spectra", "peaks", "vectors"):
        cur = conn.execute(f"SELECT * FROM {table} ORDER BY rowid")
        cols = [d[0] for d in cur.description]
        out[table] = [
            {c: v for c, v in zip(cols, row) if c != "added_at"} for row in cur.fetchall()
        ]
    return out


@pytest.mark.parametrize("chunk_size", [1, 2, 1000])
def test_bulk_rows_equal_one_by_one_rows(tmp_path, chunk_size):
    one = Library.create(tmp_path / "one.sqlite")
    bulk = Library.create(tmp_path / "bulk.sqlite")
    # something already in both, so names and aliases are also found in the file
    for lib in (one, bulk):
        lib.add(PeakList(np.array([2250.0, 1420.0]), np.array([1.0, 0.3])), name="acetonitrile")
    expected = [one.add(**{"check_similar": False, **it}) for it in _items()]
    got = add_bulk(bulk, _items(), chunk_size=chunk_size)
    assert [r.to_dict() for r in got] == [r.to_dict() for r in expected]
    assert _rows(bulk) == _rows(one)
    # every stored vector is the encoding of the stored peaks, under the same key
    assert {r["encoding"] for r in _rows(bulk)["vectors"]} == {bulk.encoding.key()}


def test_revision_bumps_once_per_chunk_and_search_sees_the_new_rows(tmp_path):
    lib = Library.create(tmp_path / "lib.sqlite")
    before = lib.revision
    lib.index()  # a cached index must not survive the bulk add
    add_bulk(lib, _items(), chunk_size=4)
    assert lib.revision == before + 2  # 6 items in chunks of 4: two transactions
    res = lib.search(
        PeakList(
            np.array(BANDS["benzonitrile"][0], float), np.array(BANDS["benzonitrile"][1], float)
        ),
        prep="chcl3",
    )
    assert res.hits[0].name == "benzonitrile"


def test_a_bad_item_leaves_earlier_chunks_and_none_of_its_own(tmp_path):
    lib = Library.create(tmp_path / "lib.sqlite")
    items = _items()[:3] + [{"data": PeakList(np.array([1700.0]), np.array([1.0])), "name": " "}]
    with pytest.raises(ValidationError, match="item 3"):
        add_bulk(lib, items, chunk_size=2)
    names = {c["name"] for c in lib.compounds()}
    assert names == {"acetone", "Ethanol"}  # chunk 0 in; item 2 shared a chunk with item 3


def test_duplicate_file_refused_like_add(tmp_path):
    lib = Library.create(tmp_path / "lib.sqlite")
    items = _items()
    add_bulk(lib, items[1:2])
    with pytest.raises(ValidationError, match="already in the library as spectrum 1"):
        add_bulk(lib, _items()[1:2])
    with pytest.raises(ValidationError, match="same file as item 0"):
        add_bulk(Library.create(tmp_path / "b.sqlite"), _items()[1:2] * 2)
    res = add_bulk(lib, [{**_items()[1], "force": True}])
    assert not res[0].new_compound


def test_unknown_keyword_is_refused(tmp_path):
    lib = Library.create(tmp_path / "lib.sqlite")
    with pytest.raises(ValidationError, match="unknown keys check_similar"):
        add_bulk(lib, [{**_items()[0], "check_similar": True}])


def test_worker_processes_pick_the_same_peaks(gas_phase, tmp_path):
    """Full spectra (the real gas-phase files of the jcamp 1.3.2 sdist, as mechanics data)
    picked in two worker processes give exactly the peaks picked in this process."""
    from reflib.io import read_all
    from reflib.library.bulk import PARALLEL_MIN, add_bulk
    from reflib.spectrum import Spectrum

    spectra = []
    for path in sorted(gas_phase.glob("*.jdx")):
        blocks = [b for b in read_all(path) if isinstance(b, Spectrum)]
        if len(blocks) == 1:
            spectra.append((path.stem, blocks[0]))
        if len(spectra) == PARALLEL_MIN:
            break
    rows = []
    for workers, name in [(1, "serial.sqlite"), (2, "parallel.sqlite")]:
        lib = Library.create(tmp_path / name)
        items = [{"data": s, "name": stem, "prep": "gas", "force": True} for stem, s in spectra]
        add_bulk(lib, items, workers=workers)
        rows.append(
            lib.store.conn.execute(
                "SELECT spectrum_id, position, intensity, width, strength FROM peaks ORDER BY id"
            ).fetchall()
        )
        lib.close()
    assert rows[0] and rows[0] == rows[1]
