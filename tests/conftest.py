"""Shared fixtures. ``refdata`` is the unpacked jcamp 1.3.2 source distribution's data folder.

In CI (CI=true) a test that needs the outside data fails when it is missing; on a developer
machine without network it is skipped with the reason.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "scripts"))

import fetch_reference_data  # noqa: E402


@pytest.fixture(scope="session")
def refdata() -> Path:
    path = fetch_reference_data.data_dir()
    if not (path / "infrared_spectra").is_dir():
        msg = (
            f"outside reference data missing at {path.name}; "
            "run python scripts/fetch_reference_data.py"
        )
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail(msg)
        pytest.skip(msg)
    return path


@pytest.fixture(scope="session")
def gas_phase(refdata: Path) -> Path:
    """Folder of the distribution's gas-phase infrared spectra."""
    return refdata / "infrared_spectra"
