"""Cross-reader fuzzing through files: whatever the bytes, only ReflibError escapes read_all.

The per-reader fuzz tests (tests/test_jcamp.py, test_delimited.py, test_peaktext.py) call each
parser on text. These go through the public file entry point instead, so the size and binary
checks, the decoding and the content sniffer are fuzzed too, with cases the others lack: raw
bytes spliced into valid files, huge and subnormal numbers, LINK blocks nested far deeper than
allowed, and token soup of JCAMP-DX labels. Strategies are shared with the long run in
scripts/fuzz_readers.py (12 000 cases by default). Refusing malformed input with a clear error
instead of guessing is the project's rule (common practice, no source).
"""

from __future__ import annotations

import fuzz_readers  # scripts/, on sys.path through tests/conftest.py
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from reflib.errors import ReadError, ReflibError
from reflib.io import read_all, read_spectrum


@pytest.fixture(scope="module")
def case_path(tmp_path_factory):
    return tmp_path_factory.mktemp("fuzz") / "case.dat"


@pytest.mark.parametrize("name", sorted(fuzz_readers.SEEDS))
def test_seed_files_are_valid(case_path, name):
    """The mutations start from files reflib reads, so they probe the edges of real input."""
    case_path.write_text(fuzz_readers.SEEDS[name])
    objs = read_all(case_path)
    fuzz_readers.check_result(objs)
    assert len(objs) == (2 if name == "link" else 1)


@settings(
    max_examples=800,
    deadline=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)
@given(fuzz_readers.fuzz_files())
def test_fuzzed_files_give_only_reflib_errors(case_path, case):
    kind, data = case
    assert fuzz_readers.read_case(case_path, data) in ("accepted", "refused")


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(min_value=9, max_value=400))
def test_deep_link_nesting_is_refused_with_the_limit(depth):
    """A LINK tree deeper than the reader's limit is refused by name, not by recursion error."""
    from reflib.io.jcamp import MAX_DEPTH, parse_jcamp

    assert depth > MAX_DEPTH
    text = "".join(f"##TITLE=l{k}\n##DATA TYPE=LINK\n##BLOCKS=1\n" for k in range(depth))
    text += fuzz_readers.SEEDS["peak_table"] + "##END=\n" * depth
    with pytest.raises(ReadError, match="nested"):
        parse_jcamp(text)


def test_nul_after_the_sniffed_head_is_still_refused(case_path):
    """A NUL byte deep in a file (a truncated copy padded with zeros) gives a ReflibError."""
    text = fuzz_readers.SEEDS["csv"].encode()
    case_path.write_bytes(text + b"\x00" * 5000 + text[-200:])
    with pytest.raises(ReflibError):
        read_spectrum(case_path)
