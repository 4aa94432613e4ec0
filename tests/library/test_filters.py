"""Filtered search and list: --role, --tag, --has-group, --smarts, --added-by, --since.

Band positions are condensed-phase values from memory (typical handbook values). Group
membership is checked against textbook chemistry: acetone is a ketone, ethyl acetate an ester
and not a ketone, ethanol an alcohol (common practice, no source).
"""

import numpy as np
import pytest

from reflib.errors import ValidationError
from reflib.library import Library
from reflib.library.filters import Where
from reflib.spectrum import Metadata, PeakList

ACETONE = ([3005, 2925, 1715, 1420, 1365, 1220, 1092, 530], "CC(C)=O")
BUTANONE = ([2980, 2940, 1715, 1460, 1415, 1365, 1170, 760], "CCC(C)=O")
ETHYL_ACETATE = ([2985, 2940, 1740, 1445, 1375, 1240, 1048, 938, 848], "CCOC(C)=O")
ETHANOL = ([3340, 2975, 2930, 1380, 1090, 1050, 880], "CCO")


def _pl(pos, sha=None):
    return PeakList(np.array(pos, float), np.linspace(1, 0.3, len(pos)), meta=Metadata(sha256=sha))


@pytest.fixture()
def lib(tmp_path):
    lib = Library.create(tmp_path / "f.sqlite")
    for name, bands, role, op in [
        ("acetone", ACETONE, "solvent", "A. Okafor"),
        ("butanone", BUTANONE, "product", "M. Lindqvist"),
        ("ethyl acetate", ETHYL_ACETATE, "solvent", "M. Lindqvist"),
        ("ethanol", ETHANOL, "reagent", "A. Okafor"),
    ]:
        lib.add(_pl(bands[0], name), name=name, smiles=bands[1], role=role, operator=op,
                check_similar=False)  # fmt: skip
    lib.edit("ethanol", tag=["dry"])
    yield lib
    lib.close()


def _names(rows):
    return sorted(r["name"] for r in rows)


def test_list_filters(lib):
    assert _names(lib.compounds(where={"has_group": "ketone"})) == ["acetone", "butanone"]
    assert _names(lib.compounds(where={"has_group": "ester"})) == ["ethyl acetate"]
    assert _names(lib.compounds(where={"smarts": "[OX2H]"})) == ["ethanol"]
    assert _names(lib.compounds(where={"tag": "DRY"})) == ["ethanol"]
    assert _names(lib.compounds(where={"added_by": "m. lindqvist"})) == [
        "butanone",
        "ethyl acetate",
    ]
    assert _names(lib.compounds(where={"role": "solvent", "has_group": "ketone"})) == ["acetone"]
    assert lib.compounds(where={"since": "2999-01-01"}) == []
    assert len(lib.compounds(where={"since": "2000-01-01"})) == 4


def test_filtered_search_ranks_only_matching_refs_with_exact_scores(lib):
    q = _pl(ACETONE[0])
    full = lib.search(q, top=4)
    assert full.hits[0].name == "acetone"
    res = lib.search(q, top=4, where={"role": "product"})
    assert [h.name for h in res.hits] == ["butanone"]
    # the score of a matching reference is the same as in the unrestricted search
    same = next(h for h in full.hits if h.name == "butanone")
    assert res.hits[0].score == pytest.approx(same.score, abs=1e-6)
    assert "restricted to 1 of 4 reference spectra (role=product)" in res.reason
    assert "restricted" in res.to_dict()["verdict_reason"]
    assert "restricted" not in full.reason


def test_filter_that_matches_nothing_is_no_match(lib):
    res = lib.search(_pl(ACETONE[0]), where=Where(has_group="nitrile"))
    assert res.verdict == "no-match" and res.hits == []
    assert "restricted to 0 of 4" in res.reason


def test_bad_filters_are_clear_errors(lib):
    with pytest.raises(ValidationError, match="unknown group"):
        Where(has_group="ketones")
    with pytest.raises(ValidationError, match="invalid SMARTS"):
        Where(smarts="[C")
    with pytest.raises(ValidationError, match="--since expects a date"):
        Where(since="yesterday")
    with pytest.raises(ValidationError, match="unknown role"):
        Where(role="catalyst")
    with pytest.raises(ValidationError, match="unknown filter"):
        lib.search(_pl(ACETONE[0]), where={"colour": "red"})


def test_cli_search_and_list_filters(lib, tmp_path):
    import json

    from typer.testing import CliRunner

    from reflib.cli import app

    path = lib.path
    lib.close()
    q = tmp_path / "q.txt"
    q.write_text(", ".join(str(p) for p in ACETONE[0]))
    run = CliRunner().invoke
    r = run(app, ["search", str(q), "--has-group", "ester", "--json", "-L", path])
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    assert [h["name"] for h in d["hits"]] == ["ethyl acetate"]
    assert "has-group=ester" in d["verdict_reason"]
    r = run(app, ["list", "--tag", "dry", "--json", "-L", path])
    assert [x["name"] for x in json.loads(r.output)] == ["ethanol"]
    r = run(app, ["list", "--has-group", "ketones", "-L", path])
    assert r.exit_code != 0
