"""``reflib serve`` refuses an unsafe setup with one line and exit status 2, before listening
(common practice, no source: a server reachable off this machine must ask for a token)."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]


def _serve(*args: str) -> subprocess.CompletedProcess:
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    env.pop("REFLIB_TOKEN", None)
    return subprocess.run(
        [sys.executable, "-m", "reflib", "serve", *args],
        env=env, capture_output=True, text=True, timeout=60,
    )  # fmt: skip


@pytest.mark.parametrize(
    "args, text",
    [
        (["--host", "0.0.0.0"], "needs a token"),
        (["--host", "192.168.1.20"], "needs a token"),
        (["--host", "0.0.0.0", "--token", "short"], "at least 16"),
        (["--max-upload-mb", "0"], "above 0"),
    ],
)
def test_unsafe_or_impossible_setups_exit_2(demo_library, args, text):
    r = _serve(*args, "-L", str(demo_library))
    assert r.returncode == 2
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and text in lines[0]


def test_missing_library_and_bad_users_file(tmp_path, demo_library):
    r = _serve("-L", str(tmp_path / "none.sqlite"))
    assert r.returncode == 2 and "no library" in r.stderr
    users = tmp_path / "users.txt"
    users.write_text("abc A. Okafor\n", encoding="utf-8")
    r = _serve("--users", str(users), "-L", str(demo_library))
    assert r.returncode == 2 and "shorter than 16" in r.stderr
