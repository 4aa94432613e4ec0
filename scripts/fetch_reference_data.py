"""Fetch the outside reference data the tests check against, into a git-ignored cache.

The source distribution of the PyPI package ``jcamp`` 1.3.2 carries the published JCAMP-DX test
files (the JCAMP-DX.org official set and R. J. Lancashire's set) and about 70 gas-phase infrared
spectra. We use its data files only; its parser is not a reference. None of it is committed.

    python scripts/fetch_reference_data.py          # into .refdata/ at the repository root
    REFLIB_REFDATA=/some/dir python scripts/fetch_reference_data.py

Exit status 0 when the data is in place (already or now), 1 when it could not be fetched.
"""

from __future__ import annotations

import hashlib
import os
import subprocess
import sys
import tarfile
import tempfile
from pathlib import Path

PACKAGE = "jcamp"
VERSION = "1.3.2"
SHA256 = "27ce753f5bb2601d3138fc2a4787c0049deb0ab51ce052cb62806bcbd12eddb9"
ROOT = Path(__file__).resolve().parent.parent


def cache_dir() -> Path:
    """Where the unpacked data lives: $REFLIB_REFDATA or <repo>/.refdata."""
    return Path(os.environ.get("REFLIB_REFDATA", ROOT / ".refdata"))


def data_dir() -> Path:
    """The unpacked ``data/`` folder of the distribution."""
    return cache_dir() / f"{PACKAGE}-{VERSION}" / "data"


def fetch() -> Path:
    target = data_dir()
    if (target / "infrared_spectra").is_dir():
        return target
    cache = cache_dir()
    cache.mkdir(parents=True, exist_ok=True)
    with tempfile.TemporaryDirectory() as tmp:
        cmd = [
            sys.executable,
            "-m",
            "pip",
            "download",
            "--no-deps",
            "--no-binary",
            ":all:",
            "--disable-pip-version-check",
            "-q",
            "-d",
            tmp,
            f"{PACKAGE}=={VERSION}",
        ]
        subprocess.run(cmd, check=True)
        archives = list(Path(tmp).glob(f"{PACKAGE}-{VERSION}.tar.gz"))
        if not archives:
            raise SystemExit(f"pip did not produce {PACKAGE}-{VERSION}.tar.gz")
        archive = archives[0]
        digest = hashlib.sha256(archive.read_bytes()).hexdigest()
        if digest != SHA256:
            raise SystemExit(f"hash mismatch for {archive.name}: got {digest}, expected {SHA256}")
        with tarfile.open(archive) as tar:
            members = [m for m in tar.getmembers() if m.isfile() or m.isdir()]
            for m in members:
                if m.name.startswith("/") or ".." in Path(m.name).parts:
                    raise SystemExit(f"refusing unsafe path in archive: {m.name}")
            tar.extractall(cache, members=members)
    return target


def main() -> int:
    try:
        path = fetch()
    except (subprocess.CalledProcessError, OSError) as exc:
        print(f"could not fetch {PACKAGE}=={VERSION}: {exc}", file=sys.stderr)
        return 1
    n = len(list((path / "infrared_spectra").glob("*.jdx")))
    print(f"reference data ready: {n} gas-phase infrared spectra and the JCAMP-DX test sets")
    return 0


if __name__ == "__main__":
    sys.exit(main())
