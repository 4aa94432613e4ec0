"""Bulk import: worker processes read and pick, the writes stay one transaction per file.

The typed peak lists are mechanics data (positions drawn from a seeded generator).
"""

import numpy as np

from reflib.library import Library
from reflib.library.importer import READ_AHEAD, plan_import, run_import


def _folder(tmp_path, n):
    rng = np.random.default_rng(3)
    folder = tmp_path / "files"
    folder.mkdir()
    for i in range(n):
        pos = np.sort(rng.uniform(500, 3500, 12))[::-1]
        (folder / f"c{i:03d}.txt").write_text(", ".join(f"{p:.0f} s" for p in pos) + " cm-1")
    (folder / "zz-broken.txt").write_text("1715 s, 17150 m cm-1")
    return folder


def test_parallel_import_equals_serial_import(tmp_path):
    folder = _folder(tmp_path, READ_AHEAD + 8)
    tables = []
    for workers in (1, 2):
        lib = Library.create(tmp_path / f"lib{workers}.sqlite")
        report = run_import(lib, plan_import(folder), workers=workers)
        assert report.added == READ_AHEAD + 8 and report.skipped == 0
        assert [f for f, _ in report.failures] == ["zz-broken.txt"]
        # the failure keeps its line number although it crossed a process boundary
        assert "line 1" in report.failures[0][1]
        tables.append(
            lib.store.conn.execute(
                "SELECT c.name, p.position, p.intensity FROM peaks p JOIN spectra s "
                "ON s.id = p.spectrum_id JOIN compounds c ON c.id = s.compound_id ORDER BY p.id"
            ).fetchall()
        )
        again = run_import(lib, plan_import(folder), workers=workers)
        assert again.added == 0 and again.skipped == READ_AHEAD + 8
        lib.close()
    assert tables[0] and tables[0] == tables[1]
