"""Edits with history: every add, remove, merge and edit recorded with time, operator, old and
new value; a removed compound's record stays. Band positions from memory (handbook values)."""

import json

import numpy as np
import pytest

from reflib.errors import NotFoundError, ValidationError
from reflib.library import Library
from reflib.spectrum import Metadata, PeakList

ACETONE = [3005, 2925, 1715, 1420, 1365, 1220, 1092, 530]
ETHANOL = [3340, 2975, 2930, 1380, 1090, 1050, 880]


def _pl(pos, sha):
    return PeakList(np.array(pos, float), np.linspace(1, 0.2, len(pos)), meta=Metadata(sha256=sha))


@pytest.fixture()
def lib(tmp_path):
    lib = Library.create(tmp_path / "h.sqlite")
    lib.add(_pl(ACETONE, "a1"), name="acetone", smiles="CC(C)=O", operator="A. Okafor",
            check_similar=False)  # fmt: skip
    lib.add(_pl(ETHANOL, "e1"), name="ethnol", role="solvent", operator="A. Okafor",
            check_similar=False)  # fmt: skip
    yield lib
    lib.close()


def test_edit_records_old_and_new_values(lib):
    out = lib.edit("ethnol", name="ethanol", smiles="CCO", tag=["dry"], operator="M. Lindqvist")
    assert {c["field"] for c in out["changes"]} == {"name", "smiles", "tags"}
    c = lib.show("ethanol")
    assert c["inchikey"] == "LFQSCWFLJHTTHZ-UHFFFAOYSA-N"  # ethanol's InChIKey, from memory
    assert c["tags"] == ["dry"]
    hist = lib.history("ethanol")
    assert [h["action"] for h in hist] == ["add", "edit", "edit", "edit"]
    name_change = next(h for h in hist if h["field"] == "name")
    assert (name_change["old"], name_change["new"]) == ("ethnol", "ethanol")
    assert name_change["operator"] == "M. Lindqvist" and name_change["at"]
    assert json.loads(next(h for h in hist if h["field"] == "tags")["new"]) == ["dry"]
    # the old name still finds the history
    assert lib.history("ethnol") == hist


def test_untag_role_note_and_nothing_to_change(lib):
    lib.edit("acetone", tag=["dry", "bottle 3"])
    out = lib.edit("acetone", untag=["dry"], role="solvent", note="Fluka lot 7")
    assert lib.show("acetone")["tags"] == ["bottle 3"]
    assert lib.show("acetone")["role"] == "solvent"
    assert len(out["changes"]) == 3
    with pytest.raises(ValidationError, match="nothing to change"):
        lib.edit("acetone")
    with pytest.raises(ValidationError, match="no tag"):
        lib.edit("acetone", untag=["wet"])
    with pytest.raises(ValidationError, match="already called"):
        lib.edit("acetone", name="ETHNOL")
    with pytest.raises(ValidationError, match="unknown role"):
        lib.edit("acetone", role="catalyst")
    with pytest.raises(ValidationError, match="invalid SMILES"):
        lib.edit("acetone", smiles="C(C")
    # the refused edits wrote no record
    assert [h["action"] for h in lib.history("acetone")] == ["add", "edit", "edit", "edit", "edit"]


def test_removed_compound_keeps_its_history(lib):
    cid = lib.show("acetone")["id"]
    lib.remove("acetone", operator="M. Lindqvist")
    with pytest.raises(NotFoundError):
        lib.show("acetone")
    hist = lib.history("acetone")
    assert [h["action"] for h in hist] == ["add", "remove"]
    assert hist[-1]["operator"] == "M. Lindqvist"
    assert lib.history(str(cid)) == hist
    with pytest.raises(NotFoundError):
        lib.history("never there")


def test_operator_defaults_to_login_name(lib, monkeypatch):
    import getpass

    monkeypatch.setattr(getpass, "getuser", lambda: "labuser7")
    lib.edit("acetone", note="checked")
    assert lib.history("acetone")[-1]["operator"] == "labuser7"


def test_bulk_add_is_recorded(tmp_path):
    lib = Library.create(tmp_path / "b.sqlite")
    lib.add_many([{"data": _pl(ACETONE, "b1"), "name": "acetone", "operator": "robot"}])
    hist = lib.history("acetone")
    assert hist[0]["action"] == "add" and hist[0]["operator"] == "robot"
    lib.close()


def test_cli_edit_and_history(tmp_path, lib):
    from typer.testing import CliRunner

    from reflib.cli import app

    path = lib.path
    lib.close()
    run = CliRunner().invoke
    r = run(app, ["edit", "ethnol", "--name", "ethanol", "--operator", "ML", "-L", path])
    assert r.exit_code == 0, r.output
    assert "'ethnol' -> 'ethanol'" in r.output
    r = run(app, ["history", "ethanol", "--json", "-L", path])
    assert r.exit_code == 0, r.output
    assert [h["action"] for h in json.loads(r.output)] == ["add", "edit"]


def test_role_changed_by_an_add_is_recorded(lib):
    lib.add(_pl(ACETONE, "a2"), name="acetone", role="solvent", operator="ML", check_similar=False)
    rec = lib.history("acetone")[-2]
    assert (rec["action"], rec["field"], rec["old"], rec["new"]) == ("edit", "role", "other",
                                                                    "solvent")  # fmt: skip
    lib.add_many([{"data": _pl(ACETONE, "a3"), "name": "acetone", "role": "reagent"}])
    assert any(h["field"] == "role" and h["new"] == "reagent" for h in lib.history("acetone"))
