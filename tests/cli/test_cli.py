"""The command line: thin over the API; user mistakes give one line and exit status 2.

Band positions in the typed peak lists are condensed-phase values from memory.
"""

import json
import subprocess
import sys

import pytest
from typer.testing import CliRunner

from reflib.cli import app

runner = CliRunner()

ACETONE = "3005 w, 1715 vs, 1420 m, 1365 s, 1220 s, 1092 w, 530 m cm-1"
BENZONITRILE = "3065 w, 2230 s, 1600 w, 1490 m, 1450 m, 760 vs, 690 vs, 550 m"


def reflib(*args, cwd=None, env=None):
    """Run the real console entry point in a subprocess (exit codes and stderr as a user sees)."""
    return subprocess.run(
        [sys.executable, "-m", "reflib.cli", *args],
        capture_output=True,
        text=True,
        cwd=cwd,
        env=env,
    )


@pytest.fixture()
def libpath(tmp_path):
    p = tmp_path / "lib.sqlite"
    assert runner.invoke(app, ["init", str(p)]).exit_code == 0
    for name, peaks, role in [
        ("acetone", ACETONE, "solvent"),
        ("benzonitrile", BENZONITRILE, "starting material"),
    ]:
        r = runner.invoke(
            app, ["add", "-L", str(p), "--name", name, "--peaks", peaks, "--role", role]
        )
        assert r.exit_code == 0, r.output
    return p


def test_add_list_show_search(libpath, tmp_path):
    r = runner.invoke(app, ["list", "-L", str(libpath)])
    assert "acetone" in r.output and "benzonitrile" in r.output
    r = runner.invoke(app, ["show", "-L", str(libpath), "benzonitrile"])
    assert "2230" in r.output
    q = tmp_path / "unknown.txt"
    q.write_text("IR (film): 3060 w, 2228 s, 1598 w, 1489 m, 1447 m, 758 vs, 688 vs, 548 m cm-1")
    r = runner.invoke(app, ["search", "-L", str(libpath), str(q), "--json"])
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    assert d["hits"][0]["name"] == "benzonitrile"
    assert d["query"]["prep"] == ["film"]
    assert set(d["hits"][0]) >= {
        "rank",
        "name",
        "compound_id",
        "spectrum_id",
        "score",
        "matched",
        "missing",
        "new",
    }
    r = runner.invoke(app, ["search", "-L", str(libpath), str(q)])
    assert "benzonitrile" in r.output and "evidence, not proof" in r.output


def test_environment_variable_names_the_library(libpath, tmp_path):
    r = runner.invoke(app, ["list"], env={"REFLIB_LIBRARY": str(libpath)})
    assert "acetone" in r.output


@pytest.mark.parametrize(
    "args, fragment",
    [
        (["list", "-L", "missing.sqlite"], "reflib init"),
        (["peaks", "no-such-file.jdx"], "no such file"),
        (["search", "-L", "{lib}", "{q}", "--prep", "nujoll"], "nujol"),
        (["show", "-L", "{lib}", "benzoin"], "no compound"),
        (
            ["add", "-L", "{lib}", "--name", "x", "--peaks", "1715 vs", "--role", "catalystish"],
            "role",
        ),
        (["add", "-L", "{lib}", "--name", "x", "--peaks", "hello"], "--peaks"),
        (["search", "-L", "{lib}", "{q}", "--weights", "carbonyl"], "profile"),
    ],
)
def test_user_mistakes_exit_2_with_one_line(libpath, tmp_path, args, fragment):
    q = tmp_path / "q.txt"
    q.write_text(ACETONE)
    args = [a.format(lib=libpath, q=q) for a in args]
    r = reflib(*args, cwd=tmp_path)
    assert r.returncode == 2, (r.stdout, r.stderr)
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in r.stderr
    assert fragment in lines[0]


def test_remove_needs_yes_when_not_interactive(libpath, tmp_path):
    r = reflib("remove", "-L", str(libpath), "acetone", cwd=tmp_path)
    assert r.returncode == 2 and "--yes" in r.stderr
    r = reflib("remove", "-L", str(libpath), "acetone", "--yes", cwd=tmp_path)
    assert r.returncode == 0
    assert "acetone" not in reflib("list", "-L", str(libpath)).stdout


def test_import_manifest_reports_failures_and_keeps_good_ones(tmp_path):
    lib = tmp_path / "lib.sqlite"
    reflib("init", str(lib))
    (tmp_path / "a.txt").write_text(ACETONE)
    (tmp_path / "b.txt").write_text(BENZONITRILE)
    (tmp_path / "bad.txt").write_text("not a spectrum at all")
    (tmp_path / "m.csv").write_text(
        "file,name,prep,role\na.txt,acetone,film,solvent\nb.txt,benzonitrile,,\n"
        "bad.txt,broken,,\nmissing.txt,ghost,,\n"
    )
    r = reflib("import", "-L", str(lib), str(tmp_path / "m.csv"))
    assert r.returncode == 1
    assert "added 2" in r.stdout and "failed 2" in r.stdout
    assert "bad.txt" in r.stdout and "missing.txt" in r.stdout
    # run again: the good ones are skipped by file hash, not added twice
    r = reflib("import", "-L", str(lib), str(tmp_path / "m.csv"))
    assert "added 0, skipped 2" in r.stdout


def test_batch_search_of_a_folder_writes_json_lines_and_csv(libpath, tmp_path):
    folder = tmp_path / "crudes"
    folder.mkdir()
    (folder / "a.txt").write_text(ACETONE)
    (folder / "b.txt").write_text(BENZONITRILE)
    (folder / "broken.txt").write_text("hello")
    summary = tmp_path / "summary.csv"
    r = reflib("search", "-L", str(libpath), str(folder), "--json", "--csv", str(summary))
    assert r.returncode == 1  # one file could not be read; the others were searched
    assert "broken.txt" in r.stderr
    docs = [json.loads(line) for line in r.stdout.splitlines()]
    assert [d["hits"][0]["name"] for d in docs] == ["acetone", "benzonitrile"]
    rows = summary.read_text().splitlines()
    assert rows[0].startswith("file,verdict,top_hit") and len(rows) == 3


def test_export_writes_files_that_read_back(libpath, tmp_path):
    out = tmp_path / "out"
    r = reflib("export", "-L", str(libpath), str(out), "--format", "jcamp")
    assert r.returncode == 0, r.stderr
    from reflib.io import read_spectrum

    files = sorted(out.glob("*.jdx"))
    assert len(files) == 2
    back = {f.name.split("-")[0]: read_spectrum(f) for f in files}
    assert any(abs(p - 2230) < 0.5 for p in back["benzonitrile"].positions)
    r = reflib("export", "-L", str(libpath), str(tmp_path / "csv"), "--format", "csv")
    assert r.returncode == 0 and len(list((tmp_path / "csv").glob("*.csv"))) == 2
    r = reflib("export", "-L", str(libpath), str(tmp_path / "x"), "--format", "xls")
    assert r.returncode == 2 and "jcamp" in r.stderr


def test_show_prints_the_authors_labels_beside_reflibs_reading(tmp_path):
    """An ester C=O near 1745 cm-1 and C-O near 1240 cm-1 (common practice, no source)."""
    p = tmp_path / "lib.sqlite"
    assert runner.invoke(app, ["init", str(p)]).exit_code == 0
    line = "Rf 0.4; IR (film) 2985 (m), 1745 (vs, C=O), 1240 (s, C-O) cm-1; 1H NMR δ 4.1 (q, 2H)"
    r = runner.invoke(app, ["add", "-L", str(p), "--name", "ethyl ester X", "--peaks", line])
    assert r.exit_code == 0, r.output
    r = runner.invoke(app, ["show", "-L", str(p), "ethyl ester X"])
    assert r.exit_code == 0, r.output
    assert "1745 vs (C=O), 1240 s (C-O)" in r.output
    assert "author says C=O at 1745; reflib: " in r.output
    r = runner.invoke(app, ["show", "-L", str(p), "ethyl ester X", "--json"])
    spectrum = json.loads(r.output)["spectra"][0]
    assert [q.get("label") for q in spectrum["peaks"]] == [None, "C=O", "C-O"]
    notes = {n["position"]: n for n in spectrum["label_notes"]}
    assert notes[1745.0]["author"] == "C=O" and "C=O" in notes[1745.0]["reflib"]
    assert notes[1745.0]["agree"] is True


def test_a_band_matched_in_the_airs_co2_region_is_marked(libpath, tmp_path):
    """The room's CO2 (2360/2340 doublet; common practice, no source) shows in a sample and a
    reference measured against different backgrounds: a pair matched in the CO2 region is
    marked, so that the air's band is not read as evidence for the compound."""
    r = runner.invoke(
        app,
        ["add", "-L", str(libpath), "--name", "benzonitrile, wet run", "--peaks",
         "3060 w, 2361 w, 2228 s, 1598 w, 1489 m, 1447 m, 758 vs, 688 vs cm-1"],
    )  # fmt: skip
    assert r.exit_code == 0, r.output
    q = tmp_path / "unknown.txt"
    q.write_text("IR (film): 3060 w, 2360 w, 2228 s, 1598 w, 1489 m, 1447 m, 758 vs, 688 vs cm-1")
    r = runner.invoke(app, ["search", "-L", str(libpath), str(q)])
    assert r.exit_code == 0, r.output
    matched = next(line for line in r.output.splitlines() if "matched:" in line)
    assert "2360~2361 (CO2 region)" in matched and "2228~2228," in matched, matched
