"""A reference build never deletes anything it did not create (reliability defect 1).

Each case below deleted a folder before the fix: ``--name ..`` emptied the workspace,
``-o SOURCE`` deleted the essays, ``-o WORKSPACE`` the history.
"""

from __future__ import annotations

import pytest
from typer.testing import CliRunner

from hingeword import reference
from hingeword.cli import app
from hingeword.errors import ReferenceDataError

from conftest import BUILD_DATE, CONLLU_DIR

runner = CliRunner()


@pytest.mark.parametrize("name", ["..", ".", "../x", "../../x", "/tmp/x", "a/b", "a\\b", "", ".hidden", "x" * 65])
def test_reference_build_refuses_names_with_path_parts(tmp_path, name):
    with pytest.raises(ReferenceDataError, match="is not allowed"):
        reference.build(CONLLU_DIR, tmp_path / "out", name=name, fmt="conllu")


def test_cli_reference_build_dotdot_name_keeps_the_workspace(hand_run):
    before = sorted(p.name for p in hand_run.iterdir())
    result = runner.invoke(app, ["reference", "build", str(CONLLU_DIR), "--name", "..", "--format", "conllu",
                                 "-w", str(hand_run), "-q"])
    assert result.exit_code == 1
    assert "is not allowed" in result.output
    assert sorted(p.name for p in hand_run.iterdir()) == before
    assert (hand_run / "hingeword.sqlite").stat().st_size > 0


def test_reference_build_refuses_the_workspace_as_output(hand_run):
    with pytest.raises(ReferenceDataError, match="not a reference built by hingeword"):
        reference.build(CONLLU_DIR, hand_run, name="gold", fmt="conllu")
    assert (hand_run / "hingeword.sqlite").exists()


def test_reference_build_refuses_its_source_as_output(tmp_path):
    src = tmp_path / "src"
    src.mkdir()
    (src / "a.conllu").write_text((CONLLU_DIR / "tiny.conllu").read_text(encoding="utf-8"), encoding="utf-8")
    for target in (src, tmp_path):
        with pytest.raises(ReferenceDataError, match="its own source folder"):
            reference.build(src, target, name="gold", fmt="conllu")
    assert (src / "a.conllu").exists()


def test_reference_build_refuses_an_existing_folder_of_other_files(tmp_path):
    other = tmp_path / "precious"
    other.mkdir()
    (other / "thesis.docx").write_bytes(b"mine")
    with pytest.raises(ReferenceDataError, match="left untouched"):
        reference.build(CONLLU_DIR, other, name="gold", fmt="conllu")
    assert (other / "thesis.docx").read_bytes() == b"mine"


def test_reference_build_refuses_a_partial_folder_it_did_not_write(tmp_path):
    (tmp_path / "out.partial").mkdir()
    (tmp_path / "out.partial" / "notes.txt").write_text("not ours", encoding="utf-8")
    with pytest.raises(ReferenceDataError, match="left untouched"):
        reference.build(CONLLU_DIR, tmp_path / "out", name="gold", fmt="conllu")
    assert (tmp_path / "out.partial" / "notes.txt").exists()


def test_reference_build_replaces_its_own_earlier_build(tmp_path):
    first = reference.build(CONLLU_DIR, tmp_path / "gold", name="gold", fmt="conllu", build_date=BUILD_DATE)
    before = {p.name: p.read_bytes() for p in first.iterdir()}
    again = reference.build(CONLLU_DIR, tmp_path / "gold", name="gold", fmt="conllu", build_date=BUILD_DATE)
    assert {p.name: p.read_bytes() for p in again.iterdir()} == before
    # nothing left beside it: no temporary or old folders
    assert sorted(p.name for p in tmp_path.iterdir()) == ["gold"]


def test_reference_build_into_an_empty_folder(tmp_path):
    (tmp_path / "empty").mkdir()
    path = reference.build(CONLLU_DIR, tmp_path / "empty", name="gold", fmt="conllu", build_date=BUILD_DATE)
    assert (path / "manifest.json").exists()
