"""Gas against liquid on real spectra: the jcamp 1.3.2 sdist's gas-phase infrared folder holds
ethanol and isopropyl alcohol both as gases (``ethanol.jdx``, Dow, 2 cm-1; ``isopropyl
alcohol.jdx``, NIST, 0.48 cm-1) and as liquids (``ethanol2.jdx``, ``isopropanol_ASDF.jdx``: no
state given, but a broad hydrogen-bonded O-H band near 3340 cm-1, which only a condensed phase
has; common practice, no source). Each is searched in a library of the other gas-phase spectra
plus its partner (scripts/bench_real_pairs.py prints the full table).
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parents[2] / "scripts"))

import bench_real_pairs as pairs  # noqa: E402

from reflib.library import Library  # noqa: E402


@pytest.fixture(scope="module")
def spectra(gas_phase):
    return pairs._spectra(gas_phase)


def _search(spectra, query, partner):
    in_pairs = {s for p in pairs.PAIRS for s in p}
    lib = Library.create(":memory:")
    for stem in [s for s in spectra if s not in in_pairs] + [partner]:
        lib.add(spectra[stem], name=stem, prep=pairs._prep(stem), force=True, check_similar=False)
    res = lib.search(spectra[query], prep=pairs._prep(query), top=5)
    lib.close()
    return res


@pytest.mark.parametrize(
    ("query", "partner", "best_rank"),
    [
        ("ethanol", "ethanol2", 1),
        ("ethanol2", "ethanol", 1),
        ("isopropanol_ASDF", "isopropyl alcohol", 3),
        ("isopropyl alcohol", "isopropanol_ASDF", 3),
    ],
)
def test_partner_ranks_high_and_no_false_confidence(spectra, query, partner, best_rank):
    res = _search(spectra, query, partner)
    names = [h.name for h in res.hits]
    assert partner in names[:best_rank], names
    if names[0] != partner:
        assert res.verdict != "confident", (names[0], res.verdict)
