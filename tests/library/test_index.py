"""The index cache: grouped rows, atomic rewrite, never trusted when stale; exact scores."""

import numpy as np
import pytest

from reflib.analysis.encode import encode
from reflib.analysis.search import comparison_weights, score_block, weighted_cosine
from reflib.library import Library
from reflib.library import index as index_mod
from reflib.spectrum import PeakList

# condensed-phase band positions, from memory (mechanics test data)
BANDS = {
    "acetone": ([1715, 1365, 1220, 530], [1.0, 0.6, 0.7, 0.2]),
    "benzonitrile": ([2230, 1490, 760, 690], [0.6, 0.5, 1.0, 0.9]),
    "ethyl acetate": ([1740, 1240, 1048, 848], [1.0, 0.95, 0.6, 0.1]),
}


@pytest.fixture()
def lib(tmp_path):
    lib = Library.create(tmp_path / "lib.sqlite")
    for i, (name, (pos, inten)) in enumerate(BANDS.items()):
        lib.add(
            PeakList(np.array(pos, float), np.array(inten, float)),
            name=name,
            prep=["film", "nujol", "chcl3"][i],
            check_similar=False,
        )
    yield lib
    lib.close()


def test_cache_is_written_beside_the_library_and_reused(lib):
    path = index_mod.index_path(lib.path)
    assert index_mod.status(lib.store) == "missing"
    idx = index_mod.load(lib.store)
    assert path.exists() and index_mod.status(lib.store) == "fresh"
    again = index_mod.read(path)
    base = again.matrix  # read through the memory map, not into memory
    while base is not None and not isinstance(base, np.memmap):
        base = base.base
    assert isinstance(base, np.memmap)
    assert np.array_equal(np.asarray(again.matrix), np.asarray(idx.matrix))
    # rows of one group are contiguous and cover every row once
    covered = sorted(r for g in idx.groups for r in range(g.start, g.stop))
    assert covered == list(range(idx.size))


def test_stale_cache_is_never_trusted(lib):
    index_mod.load(lib.store)
    lib.add(
        PeakList(np.array([3350.0, 1050.0]), np.array([1.0, 0.8])),
        name="ethanol",
        check_similar=False,
    )
    assert index_mod.status(lib.store) == "stale"
    idx = index_mod.load(lib.store)
    assert idx.size == 4 and index_mod.status(lib.store) == "fresh"


def test_corrupt_or_truncated_cache_is_rebuilt(lib):
    path = index_mod.index_path(lib.path)
    index_mod.load(lib.store)
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2])
    assert index_mod.read(path) is None
    assert index_mod.load(lib.store).size == 3
    path.write_bytes(b"garbage" * 10)
    assert index_mod.load(lib.store).size == 3


def test_blocked_scores_equal_the_plain_weighted_cosine(lib):
    rng = np.random.default_rng(1)
    refs = rng.random((2500, lib.encoding.size)).astype(np.float32)
    q = rng.random(lib.encoding.size)
    w = comparison_weights(lib.encoding, ["nujol"], ["chcl3"])
    blocked = score_block(q, refs, w)[:, 0]
    assert np.allclose(blocked, weighted_cosine(q, refs, w), atol=1e-5)


def test_batch_search_equals_single_searches(lib):
    queries = [PeakList(np.array(p, float) + 2, np.array(i, float)) for p, i in BANDS.values()]
    batch = lib.search_many(queries, prep="atr")
    for q, b in zip(queries, batch):
        single = lib.search(q, prep="atr")
        assert [h.name for h in single.hits] == [h.name for h in b.hits]
        assert np.allclose([h.score for h in single.hits], [h.score for h in b.hits])
    assert [b.hits[0].name for b in batch] == list(BANDS)


def test_in_memory_library_has_no_cache_file(tmp_path):
    with Library.create(":memory:") as lib:
        lib.add(PeakList(np.array([1715.0]), np.array([1.0])), name="x", check_similar=False)
        assert index_mod.status(lib.store) == "memory"
        assert lib.search(PeakList(np.array([1716.0]), np.array([1.0]))).hits[0].name == "x"
    assert not list(tmp_path.iterdir())


def test_encode_unchanged_by_index(lib):
    idx = index_mod.load(lib.store)
    row = int(np.flatnonzero(idx.compound_ids == 1)[0])
    pos, inten = BANDS["acetone"]
    expected = encode(PeakList(np.array(pos, float), np.array(inten, float)), lib.encoding)
    assert np.allclose(idx.matrix[row], expected)


def test_cached_norms_give_the_same_scores(lib):
    from reflib.analysis.search import score_index

    idx = index_mod.load(lib.store)
    q = np.vstack(
        [encode(PeakList(np.array(p, float), np.array(i, float))) for p, i in BANDS.values()]
    )
    first = score_index(q, idx, lib.encoding, ["nujol"], (None, None))
    assert idx.norms  # one entry per group and weight vector
    n_cached = len(idx.norms)
    again = score_index(q, idx, lib.encoding, ["nujol"], (None, None))
    assert len(idx.norms) == n_cached and np.array_equal(first, again)
    for g in idx.groups:
        w = comparison_weights(lib.encoding, ["nujol"], g.prep, (None, None), (g.lo, g.hi))
        rows = np.asarray(idx.matrix[g.start : g.stop])
        assert np.allclose(first[g.start : g.stop, 0], weighted_cosine(q[0], rows, w), atol=1e-5)


def test_cache_is_column_major_and_an_old_row_major_file_is_rebuilt(lib):
    path = index_mod.index_path(lib.path)
    idx = index_mod.load(lib.store)
    assert idx.matrix.flags["F_CONTIGUOUS"]
    cached = index_mod.read(path)
    assert cached.matrix.flags["F_CONTIGUOUS"]
    # a file of the first layout (magic RFLIDX01, rows one after the other) is not read
    path.write_bytes(b"RFLIDX01" + path.read_bytes()[8:])
    assert index_mod.read(path) is None
    assert index_mod.status(lib.store) == "missing"
    assert np.array_equal(np.asarray(index_mod.load(lib.store).matrix), np.asarray(idx.matrix))


@pytest.mark.parametrize("share", [0.0, 0.05, 0.3, 0.9])
def test_run_by_run_product_equals_the_full_product(share):
    from reflib.analysis.search import sparse_matvec

    # the product of linear algebra, no source needed: a zero entry of v adds nothing to refs @ v
    rng = np.random.default_rng(7)
    refs = np.asfortranarray(rng.random((3000, 450)).astype(np.float32))
    v = (rng.random(450) * (rng.random(450) < share)).astype(np.float32)
    v[100:130] = 0.5 if share else 0.0  # one long run beside scattered entries
    out = sparse_matvec(refs, v, np.empty(3000, np.float32))
    assert np.allclose(out, np.ascontiguousarray(refs) @ v, rtol=1e-5, atol=1e-5)


def test_one_query_read_run_by_run_scores_like_the_batch(lib, monkeypatch):
    import reflib.analysis.search as search_mod
    from reflib.analysis.search import score_index

    monkeypatch.setattr(search_mod, "SPARSE_MIN_ROWS", 2)  # run by run even for a few rows

    for k in range(6):  # a group of several rows, so its columns are read run by run
        pos = np.array([1700.0, 1450.0, 1100.0]) + 7 * k
        lib.add(
            PeakList(pos, np.array([1.0, 0.5, 0.3])), name=f"x{k}", prep="film", check_similar=False
        )
    idx = index_mod.load(lib.store)
    assert max(g.stop - g.start for g in idx.groups) > 1
    q = np.vstack(
        [encode(PeakList(np.array(p, float), np.array(i, float))) for p, i in BANDS.values()]
    )
    batch = score_index(q, idx, lib.encoding, ["film"], (None, None))
    for j in range(q.shape[0]):
        one = score_index(q[j], idx, lib.encoding, ["film"], (None, None))[:, 0]
        assert np.allclose(one, batch[:, j], atol=1e-6)


def test_weighted_norms_read_by_columns_equal_those_read_by_rows():
    from reflib.analysis.search import weighted_norms

    # sqrt(sum_j w_j r_ij^2) does not depend on the order the matrix is stored in (no source)
    rng = np.random.default_rng(3)
    rows = rng.random((9000, 200)).astype(np.float32)
    w = rng.random(200) * (rng.random(200) < 0.7)  # masked bins weigh 0
    by_rows = weighted_norms(rows, w)
    by_cols = weighted_norms(np.asfortranarray(rows), w)
    assert np.allclose(by_cols, by_rows, rtol=1e-5)
    assert np.allclose(by_rows, np.sqrt((rows.astype(float) ** 2) @ w), rtol=1e-5)
