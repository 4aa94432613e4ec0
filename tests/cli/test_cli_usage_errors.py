"""Command-line usage errors through the installed ``reflib`` console script: a mistyped command
or option, a missing argument, a value of the wrong type. Each must print one line on stderr
(naming what is wrong, with a "did you mean" where a close command or option exists) and exit
with status 2, never a traceback. The contract is the project's own (common practice for
command-line tools, no source).
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

# (argv, fragment of the one stderr line)
CASES = [
    (["serach", "x.jdx"], "Did you mean 'search'"),
    (["lst"], "Did you mean 'list'"),
    (["search", "--nosuch", "x.jdx"], "No such option: --nosuch"),
    (["search"], "Missing argument"),
    (["search", "x.jdx", "--top", "abc"], "'--top'"),
    (["search", "--to", "3", "x.jdx"], "did you mean --top?"),
    (["search", "--json=3", "x.jdx"], "does not take a value"),
    (["search", "x.jdx", "--plot-y"], "requires an argument"),
    (["add", "--role"], "requires an argument"),
    (["leftover", "x.jdx", "--strat", "y"], "did you mean --start?"),
    (["leftover", "x.jdx"], "--start"),
    (["compare", "a.jdx"], "Missing argument"),
    (["mixture", "x.jdx", "--max-components", "two"], "'--max-components'"),
    (["check", "--fixx"], "did you mean --fix?"),
    (["import"], "Missing argument"),
    (["show"], "Missing argument"),
    (["init", "a.sqlite", "b.sqlite"], "unexpected extra argument"),
    (["peaks", "x.jdx", "--asign"], "did you mean --assign?"),
    (["--version"], "No such option"),
    (["backup"], "Missing argument"),
]


def console_script() -> Path:
    """The ``reflib`` script that ``pip install`` put beside this interpreter."""
    here = Path(sys.executable).parent / ("reflib.exe" if os.name == "nt" else "reflib")
    found = here if here.exists() else shutil.which("reflib")
    if not found:
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail("the reflib console script is not installed")
        pytest.skip("the reflib console script is not installed (pip install .)")
    return Path(found)


@pytest.mark.parametrize("argv, fragment", CASES, ids=[" ".join(c[0]) for c in CASES])
def test_usage_error_is_one_line_and_exit_2(tmp_path, argv, fragment):
    r = subprocess.run([str(console_script()), *argv], capture_output=True, text=True, cwd=tmp_path)
    assert r.returncode == 2, (r.returncode, r.stderr)
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1, r.stderr
    assert "Traceback" not in r.stderr and lines[0].startswith("reflib")
    assert fragment in lines[0], lines[0]
    assert r.stdout == ""


def test_no_arguments_prints_the_help(tmp_path):
    r = subprocess.run([str(console_script())], capture_output=True, text=True, cwd=tmp_path)
    assert r.returncode == 0 and "Usage: reflib" in r.stdout and "search" in r.stdout
