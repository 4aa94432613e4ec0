"""The format sniffer on the published JCAMP-DX test files (jcamp 1.3.2 source distribution).

Source: the ISAS Dortmund JCAMP-DX test set, R. J. Lancashire's test set and the gas-phase
infrared spectra shipped in the jcamp 1.3.2 sdist (fetched by scripts/fetch_reference_data.py).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from reflib.errors import ReadError
from reflib.io import read_all, sniff_format

pytestmark = pytest.mark.outside

JCAMP_SUFFIXES = {".jdx", ".dx", ".jcm"}


def _text(path: Path) -> str:
    return path.read_bytes().decode("latin-1")


def test_every_published_jcamp_file_sniffs_as_jcamp(refdata: Path):
    """Each .jdx/.dx/.jcm file of the distribution starts with ##TITLE= and friends."""
    files = [p for p in sorted(refdata.rglob("*")) if p.suffix.lower() in JCAMP_SUFFIXES]
    assert len(files) > 100  # the distribution holds well over a hundred of them
    wrong = [p.name for p in files if sniff_format(_text(p)) != "jcamp"]
    assert not wrong, wrong


def test_the_distributions_directory_listing_is_refused_not_crashed(refdata: Path):
    """DX-DIR.TXT is a prose listing of the ISAS files (names, sizes, dates): not a spectrum."""
    listing = refdata / "jcamp-dx.org_official_test_data" / "DX-DIR.TXT"
    assert sniff_format(_text(listing)) != "jcamp"
    with pytest.raises(ReadError) as err:
        read_all(listing)
    assert err.value.path == str(listing) and err.value.line is not None
