"""Shared fixtures of the server tests: the demo library (invented demo data, demo_data/) built
once, and a fresh copy of it for each test that writes."""

from __future__ import annotations

import csv
import shutil
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "demo_data"


def build_demo_library(path: Path) -> Path:
    from reflib.io import read_spectrum
    from reflib.library import Library

    with Library.create(path) as lib:
        with open(DEMO / "manifest.csv", newline="", encoding="utf-8") as fh:
            for row in csv.DictReader(fh):
                lib.add(
                    read_spectrum(DEMO / row["file"]),
                    name=row["name"],
                    smiles=row["smiles"],
                    role=row["role"],
                    prep=row["prep"],
                    notebook=row["notebook"],
                    operator=row["operator"],
                    check_similar=False,
                )
    return path


@pytest.fixture(scope="session")
def demo_library_master(tmp_path_factory) -> Path:
    return build_demo_library(tmp_path_factory.mktemp("demo") / "demo.sqlite")


@pytest.fixture()
def demo_library(demo_library_master, tmp_path) -> Path:
    dest = tmp_path / "group.sqlite"
    shutil.copyfile(demo_library_master, dest)
    return dest
