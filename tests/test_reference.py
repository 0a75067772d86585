"""Tests for hingeword.reference and hingeword.conllu: building, loading, resuming.

Data: ``tests/data/reference/native/*.txt`` (invented native sentences, parsed by
spaCy) and ``tests/data/reference/conllu/tiny.conllu`` (invented sentences with
hand-made gold Universal Dependencies parses, so its counts are exact).
"""

from __future__ import annotations

import gzip
import hashlib
import json
import shutil
from collections import Counter
from pathlib import Path

import pytest

from conftest import BUILD_DATE, CONLLU_DIR, NATIVE_DIR
from hingeword import reference
from hingeword.errors import ReferenceDataError

ARTEFACTS = ("manifest.json", "patterns.tsv.gz", "lemmas.tsv.gz", "objects.tsv.gz")

#: Every key of tiny.conllu, counted by hand from its gold trees.
GOLD_PATTERNS = {
    ("talk", "VERB", "about"): 1,  # t1: obl + case
    ("talk", "VERB", "because of"): 1,  # t1: case with a fixed child
    ("give", "VERB", "up"): 1,  # t2: compound:prt
    ("give", "VERB", "-"): 1,  # t2: obj ("to travel" is mark: not counted)
    ("proud", "ADJ", "of"): 1,  # t3: ADJ governor
    ("interest", "NOUN", "in"): 1,  # t4: nmod + case
    ("talk", "VERB", "to"): 1,  # t5: "want to talk": infinitival "to" is mark, "to you" counts
    ("look", "VERB", "at"): 1,  # t6: syntactic words of the "Don't" multiword token
    ("listen", "VERB", "to"): 1,  # t7: "Tom to rock" hangs on an orphan: no propagation
    ("eat", "VERB", "by"): 1,  # t9: obl:agent
}  # t8 "on the table": case of the root, not of an obl/nmod: no key
GOLD_LEMMAS = {
    ("talk", "VERB"): 2, ("plan", "NOUN"): 2, ("rain", "NOUN"): 1, ("give", "VERB"): 1, ("travel", "VERB"): 1,
    ("proud", "ADJ"): 1, ("daughter", "NOUN"): 1, ("interest", "NOUN"): 1, ("art", "NOUN"): 1,
    ("grow", "VERB"): 1, ("want", "VERB"): 1, ("look", "VERB"): 1, ("screen", "NOUN"): 1,
    ("listen", "VERB"): 1,  # the empty node 6.1 (elided "listened") is not a word
    ("jazz", "NOUN"): 1, ("rock", "NOUN"): 1, ("book", "NOUN"): 1, ("table", "NOUN"): 1, ("cake", "NOUN"): 1,
    ("eat", "VERB"): 1, ("dog", "NOUN"): 1,
}


def _bytes(path: Path) -> dict[str, bytes]:
    """Every artefact file (a CoNLL-U build has no objects.tsv.gz: gold trees carry no object classes)."""
    return {name: (path / name).read_bytes() for name in ARTEFACTS if (path / name).exists()}


# ------------------------------------------------------------------ CoNLL-U (exact)


def test_reference_conllu_exact_counts(conllu_ref_path):
    ref = reference.load(conllu_ref_path)
    assert dict(ref.patterns) == GOLD_PATTERNS
    assert dict(ref.lemmas) == GOLD_LEMMAS
    m = ref.manifest
    # words: tokens with a letter, 9+7+6+6+6+6+8+6+7; the "Don't" line is not counted twice
    assert (m["words"], m["sentences"], m["documents"]) == (61, 9, 1)
    assert (m["attachments"], m["patterns"]) == (10, 10)
    assert (m["model"], m["model_version"], m["format"]) == ("gold (CoNLL-U)", "-", "conllu")
    assert m["build_date"] == BUILD_DATE and m["name"] == "gold"
    assert ref.total == 10
    assert ref.governor_totals()[("talk", "VERB")] == 3
    assert ref.preposition_totals()["to"] == 2


def test_reference_conllu_bad_line_names_file_and_line(tmp_path):
    src = tmp_path / "src"
    src.mkdir()
    (src / "bad.conllu").write_text("# text = We waited.\n1\tWe\twe\tPRON\n", encoding="utf-8")
    with pytest.raises(ReferenceDataError) as exc:
        reference.build(src, tmp_path / "out", name="bad", fmt="conllu")
    assert str(exc.value) == f"{src / 'bad.conllu'}:2: not a CoNLL-U line (expected 10 tab-separated columns)"
    assert not (tmp_path / "out").exists()


def test_reference_build_refuses_bad_source(tmp_path):
    with pytest.raises(ReferenceDataError, match=r"^reference source folder not found: .*missing$"):
        reference.build(tmp_path / "missing", tmp_path / "out", name="x", fmt="conllu")
    (tmp_path / "empty").mkdir()
    with pytest.raises(ReferenceDataError, match=r"^no \.conllu files under .*empty$"):
        reference.build(tmp_path / "empty", tmp_path / "out", name="x", fmt="conllu")
    with pytest.raises(ReferenceDataError, match=r"^unknown format 'xml' \(use text or conllu\)$"):
        reference.build(CONLLU_DIR, tmp_path / "out", name="x", fmt="xml")


# ------------------------------------------------------------------ text (parsed)


@pytest.mark.slow
def test_reference_text_counts(tiny_ref_path):
    """Counts checked by hand against a printed parse (en_core_web_sm 3.8.0); only
    those a parser upgrade is unlikely to move are pinned."""
    ref = reference.load(tiny_ref_path)
    m = ref.manifest
    assert (m["documents"], m["sentences"]) == (4, 20)  # 4 files of 5 sentences each
    assert m["words"] == 154  # alphabetic tokens
    assert m["model"].startswith("en_core_web_") and m["format"] == "text"
    assert m["source"] == "text files under native/"
    assert m["attachments"] == ref.total == sum(ref.patterns.values())
    p = ref.patterns
    assert p[("discuss", "VERB", "-")] == 6  # every "discuss(ed) the ..."
    assert p[("interested", "ADJ", "in")] == 5
    assert p[("listen", "VERB", "to")] == 3
    assert p[("depend", "VERB", "on")] == 2
    assert p[("give", "VERB", "up")] == 1
    assert p[("look", "VERB", "after")] == 1
    assert p[("arrive", "VERB", "because of")] == 1
    assert p[("arrive", "VERB", "of")] == 0  # the multiword is kept whole
    assert p[("decide", "VERB", "to")] == 0  # "decided to stay": infinitival to
    assert ref.lemmas[("discuss", "VERB")] == 6
    assert ref.lemmas[("interested", "ADJ")] == 5


@pytest.mark.slow
def test_reference_build_twice_is_byte_identical(tiny_ref_path, tmp_path):
    again = reference.build(NATIVE_DIR, tmp_path / "tiny", name="tiny", build_date=BUILD_DATE)
    assert _bytes(again) == _bytes(tiny_ref_path)
    assert sorted(p.name for p in again.iterdir()) == sorted(ARTEFACTS)


def test_reference_conllu_build_twice_is_byte_identical(conllu_ref_path, tmp_path):
    again = reference.build(CONLLU_DIR, tmp_path / "gold", name="gold", fmt="conllu", build_date=BUILD_DATE)
    assert _bytes(again) == _bytes(conllu_ref_path)


# ------------------------------------------------------------------ resume


class _Stop:
    """Progress callback that records calls and interrupts after ``stop_after`` files."""

    def __init__(self, stop_after: int | None = None):
        self.stop_after = stop_after
        self.calls: list[tuple[int, int]] = []

    def __call__(self, p: reference.BuildProgress) -> None:
        self.calls.append((p.files_done, p.files_total))
        if self.stop_after is not None and p.files_done > self.stop_after:
            raise KeyboardInterrupt


def _split_conllu(tmp_path: Path) -> Path:
    """tiny.conllu cut into one file per sentence pair (5 files)."""
    blocks = (CONLLU_DIR / "tiny.conllu").read_text(encoding="utf-8").strip().split("\n\n")
    src = tmp_path / "split"
    src.mkdir()
    for i in range(0, len(blocks), 2):
        (src / f"part{i // 2}.conllu").write_text("\n\n".join(blocks[i:i + 2]) + "\n\n", encoding="utf-8")
    return src


def _interrupt_and_resume(src, out, fmt, n_files):
    # with checkpoint_every=1 the counts are saved after each file; the callback
    # stops the build while the third file is being finished, so two are saved
    first = _Stop(stop_after=2)
    with pytest.raises(KeyboardInterrupt):
        reference.build(src, out, name="tiny", fmt=fmt, checkpoint_every=1, progress=first, build_date=BUILD_DATE)
    assert first.calls == [(1, n_files), (2, n_files), (3, n_files)]
    assert not out.exists()
    state = json.loads((out.with_name(out.name + ".partial") / "state.json").read_text(encoding="utf-8"))
    assert len(state["done"]) == 2

    second = _Stop()
    path = reference.build(src, out, name="tiny", fmt=fmt, checkpoint_every=1, progress=second,
                           build_date=BUILD_DATE)
    # only the files not yet saved were counted again
    assert second.calls == [(k, n_files) for k in range(3, n_files + 1)]
    assert not out.with_name(out.name + ".partial").exists()
    return path


@pytest.mark.slow
def test_reference_text_build_resumes_after_interrupt(tiny_ref_path, tmp_path):
    path = _interrupt_and_resume(NATIVE_DIR, tmp_path / "tiny", "text", 4)
    assert _bytes(path) == _bytes(tiny_ref_path)  # same as an uninterrupted build


def test_reference_conllu_build_resumes_after_interrupt(tmp_path):
    src = _split_conllu(tmp_path)
    whole = reference.build(src, tmp_path / "whole", name="tiny", fmt="conllu", build_date=BUILD_DATE)
    path = _interrupt_and_resume(src, tmp_path / "tiny", "conllu", 5)
    assert _bytes(path) == _bytes(whole)
    ref = reference.load(path)
    assert dict(ref.patterns) == GOLD_PATTERNS
    assert (ref.manifest["documents"], ref.manifest["sentences"], ref.manifest["words"]) == (5, 9, 61)


def test_reference_checkpoint_of_other_source_is_ignored(tmp_path):
    src = _split_conllu(tmp_path)
    stop = _Stop(stop_after=2)
    with pytest.raises(KeyboardInterrupt):
        reference.build(src, tmp_path / "tiny", name="tiny", fmt="conllu", checkpoint_every=1, progress=stop)
    other = tmp_path / "other"
    shutil.copytree(src, other)
    counted = _Stop()
    path = reference.build(other, tmp_path / "tiny", name="tiny", fmt="conllu", checkpoint_every=1, progress=counted)
    assert [done for done, _ in counted.calls] == [1, 2, 3, 4, 5]  # started afresh
    assert dict(reference.load(path).patterns) == GOLD_PATTERNS


# ------------------------------------------------------------------ damaged files


def _truncate(path: Path) -> None:
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2])


def _flip(path: Path) -> None:
    data = bytearray(path.read_bytes())
    data[len(data) // 2] ^= 0xFF
    path.write_bytes(bytes(data))


def _drop_checksums(ref: Path) -> None:
    man = json.loads((ref / "manifest.json").read_text(encoding="utf-8"))
    man["files"] = {}
    (ref / "manifest.json").write_text(json.dumps(man), encoding="utf-8")


@pytest.mark.parametrize(
    "damage, victim, message",
    [
        (_truncate, "patterns.tsv.gz", "is corrupt or truncated (checksum mismatch); rebuild it"),
        (_flip, "patterns.tsv.gz", "is corrupt or truncated (checksum mismatch); rebuild it"),
        (_flip, "lemmas.tsv.gz", "is corrupt or truncated (checksum mismatch); rebuild it"),
        (Path.unlink, "lemmas.tsv.gz", "cannot be read: No such file or directory"),
        (_truncate, "manifest.json", "is corrupt or truncated"),
    ],
)
def test_reference_damaged_file_is_one_line_error_naming_it(conllu_ref_path, tmp_path, damage, victim, message):
    ref = Path(shutil.copytree(conllu_ref_path, tmp_path / "gold"))
    damage(ref / victim)
    with pytest.raises(ReferenceDataError) as exc:
        reference.load(ref)
    msg = str(exc.value)
    assert str(ref / victim) in msg
    assert message in msg
    assert "\n" not in msg


def test_reference_damaged_after_loading_is_noticed(conllu_ref_path, tmp_path):
    """A reference damaged on disk after a first load must not be served from memory."""
    ref = Path(shutil.copytree(conllu_ref_path, tmp_path / "gold"))
    assert dict(reference.load(ref).patterns) == GOLD_PATTERNS
    _flip(ref / "patterns.tsv.gz")  # same size, new contents
    with pytest.raises(ReferenceDataError, match="checksum mismatch"):
        reference.load(ref)


@pytest.mark.parametrize("damage", [_truncate, _flip])
def test_reference_damaged_gzip_without_checksum(conllu_ref_path, tmp_path, damage):
    ref = Path(shutil.copytree(conllu_ref_path, tmp_path / "gold"))
    _drop_checksums(ref)
    damage(ref / "patterns.tsv.gz")
    with pytest.raises(ReferenceDataError) as exc:
        reference.load(ref)
    msg = str(exc.value)
    assert msg.startswith(f"reference file {ref / 'patterns.tsv.gz'} ")
    assert "\n" not in msg


def _replace_data(ref: Path, name: str, raw: bytes) -> None:
    """Write a data file and record its checksum, as a (hand-edited) reference would."""
    data = gzip.compress(raw)
    (ref / name).write_bytes(data)
    man = json.loads((ref / "manifest.json").read_text(encoding="utf-8"))
    man["files"][name] = hashlib.sha256(data).hexdigest()
    (ref / "manifest.json").write_text(json.dumps(man), encoding="utf-8")


def test_reference_malformed_row_names_file(conllu_ref_path, tmp_path):
    ref = Path(shutil.copytree(conllu_ref_path, tmp_path / "gold"))
    raw = b"governor\tgovernor_pos\tpreposition\tcount\ntalk\tVERB\tabout\tmany\n"
    _replace_data(ref, "patterns.tsv.gz", raw)
    with pytest.raises(ReferenceDataError, match=r"patterns\.tsv\.gz has a malformed row: \['talk', 'VERB', 'about', 'many'\]$"):
        reference.load(ref)


def test_reference_missing_or_unknown(tmp_path):
    with pytest.raises(ReferenceDataError, match=r"^no reference at .*nothing \(missing manifest\.json\)$"):
        reference.load(tmp_path / "nothing")
    with pytest.raises(ReferenceDataError, match=r"^unknown reference 'no-such-ref' \(known: .*\)$"):
        reference.resolve("no-such-ref", tmp_path / "ws")


# ------------------------------------------------------------------ combining and finding


def test_reference_load_many_adds_counts(conllu_ref_path, tmp_path):
    second = reference.build(_split_conllu(tmp_path), tmp_path / "gold2", name="gold2", fmt="conllu",
                             build_date=BUILD_DATE)
    both = reference.load_many([str(conllu_ref_path), str(second)])
    assert both.name == "gold+gold2"
    assert both.patterns == Counter({k: 2 * v for k, v in GOLD_PATTERNS.items()})
    assert both.lemmas == Counter({k: 2 * v for k, v in GOLD_LEMMAS.items()})
    assert both.total == both.manifest["attachments"] == 20
    assert (both.manifest["words"], both.manifest["sentences"]) == (122, 18)
    assert [m["name"] for m in both.manifest["combined_from"]] == ["gold", "gold2"]
    # one reference is returned as loaded
    single = reference.load_many([str(conllu_ref_path)])
    assert single.patterns == Counter(GOLD_PATTERNS) and single.name == "gold"


@pytest.mark.slow
def test_reference_load_many_mixes_parsed_and_gold(tiny_ref_path, conllu_ref_path):
    tiny, gold = reference.load(tiny_ref_path), reference.load(conllu_ref_path)
    both = reference.load_many([str(tiny_ref_path), str(conllu_ref_path)])
    assert both.patterns == tiny.patterns + gold.patterns
    assert both.patterns[("give", "VERB", "up")] == 2  # one from each
    assert both.manifest["model"] == ", ".join(sorted([tiny.manifest["model"], "gold (CoNLL-U)"]))


def test_reference_workspace_references_are_found_by_name(conllu_ref_path, tmp_path):
    ws = tmp_path / "ws"
    shutil.copytree(conllu_ref_path, reference.references_dir(ws) / "gold")
    assert reference.resolve("gold", ws) == reference.references_dir(ws) / "gold"
    assert reference.load_many(["gold"], ws).patterns == Counter(GOLD_PATTERNS)
    listed = {m["name"]: p for p, m in reference.list_references(ws)}
    assert listed["gold"] == reference.references_dir(ws) / "gold"
