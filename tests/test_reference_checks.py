"""A user's reference is checked as the bundled one is (#15, defect 13): counts are
non-negative integers, every data file matches the checksum in its manifest, and
unpacking stops at a bound, so a small gzip that unpacks to gigabytes is refused
quickly and in little memory. The reference is built from the invented gold CoNLL-U.
"""

from __future__ import annotations

import gzip
import hashlib
import json
import shutil
from pathlib import Path

import pytest
from typer.testing import CliRunner

from hingeword import reference
from hingeword.cli import app
from hingeword.errors import ReferenceDataError

runner = CliRunner()
HEADER = b"governor\tgovernor_pos\tpreposition\tcount\n"


def _copy(conllu_ref_path: Path, tmp_path: Path) -> Path:
    return Path(shutil.copytree(conllu_ref_path, tmp_path / "mine"))


def _write_data(ref: Path, name: str, raw: bytes, *, checksum: bool = True) -> None:
    data = gzip.compress(raw)
    (ref / name).write_bytes(data)
    man = json.loads((ref / "manifest.json").read_text(encoding="utf-8"))
    if checksum:
        man["files"][name] = hashlib.sha256(data).hexdigest()
    else:
        man["files"].pop(name)
    (ref / "manifest.json").write_text(json.dumps(man), encoding="utf-8")


@pytest.mark.parametrize("count, message", [
    ("-5", "has a count out of range (not 0 to 1,000,000,000,000)"),
    ("99999999999999999999", "has a count out of range"),
    ("2.5", "has a malformed row"),
])
def test_reference_bad_counts_are_one_line_errors(conllu_ref_path, tmp_path, count, message):
    ref = _copy(conllu_ref_path, tmp_path)
    _write_data(ref, "patterns.tsv.gz", HEADER + f"discuss\tVERB\tabout\t{count}\n".encode())
    with pytest.raises(ReferenceDataError) as exc:
        reference.load(ref)
    assert str(exc.value).startswith(f"reference file {ref / 'patterns.tsv.gz'} {message}")
    assert "\n" not in str(exc.value)


def test_reference_negative_count_in_a_scan_is_one_line(conllu_ref_path, tmp_path):
    ref = _copy(conllu_ref_path, tmp_path)
    _write_data(ref, "lemmas.tsv.gz", b"lemma\tpos\ttokens\ndiscuss\tVERB\t-40\n")
    (tmp_path / "essays").mkdir()
    (tmp_path / "essays" / "a.txt").write_text("We discussed the plan.", encoding="utf-8")
    result = runner.invoke(app, ["scan", str(tmp_path / "essays"), "--class", "c", "--term", "t", "-w",
                                 str(tmp_path / "ws"), "--reference", str(ref), "-q"])
    assert result.exit_code == 1
    assert result.output.startswith(f"Error: reference file {ref / 'lemmas.tsv.gz'} has a count out of range")
    assert "Traceback" not in result.output


def test_reference_without_checksums_is_refused(conllu_ref_path, tmp_path):
    ref = _copy(conllu_ref_path, tmp_path)
    _write_data(ref, "patterns.tsv.gz", HEADER + b"discuss\tVERB\tabout\t3\n", checksum=False)
    with pytest.raises(ReferenceDataError, match="has no checksum in its manifest.json"):
        reference.load(ref)
    man = json.loads((ref / "manifest.json").read_text(encoding="utf-8"))
    man["files"] = "none"
    (ref / "manifest.json").write_text(json.dumps(man), encoding="utf-8")
    with pytest.raises(ReferenceDataError, match="has no list of files with checksums"):
        reference.load(ref)


def test_reference_unpacking_stops_at_the_bound(conllu_ref_path, tmp_path, monkeypatch):
    ref = _copy(conllu_ref_path, tmp_path)
    line = b"discuss\tVERB\tabout\t1\n"
    _write_data(ref, "patterns.tsv.gz", HEADER + line * 200_000)  # 4.4 MB unpacked, a few KB packed
    assert (ref / "patterns.tsv.gz").stat().st_size < 50_000
    monkeypatch.setattr(reference, "MAX_UNPACKED_CHARS", 1_000_000)
    with pytest.raises(ReferenceDataError, match=r"unpacks to more than 1,000,000 characters"):
        reference.load(ref)
    monkeypatch.setattr(reference, "MAX_UNPACKED_CHARS", 10_000_000)
    assert reference.load(ref).patterns[("discuss", "VERB", "about")] == 200_000  # under the bound: read


def test_reference_bundled_one_passes_the_checks():
    ref = reference.load(reference.resolve("brown"))
    assert ref.total > 100_000 and min(ref.patterns.values()) >= 1
