"""Tests for hingeword.cli through typer's CliRunner.

User mistakes must exit 1 with one ``Error: ...`` line on stderr and no
traceback (as sqlite-utils ``test_duplicate_table`` asserts its error line).
Paths are kept short by running in ``tmp_path`` with relative paths. Essays
are invented (``conftest.py``).
"""

from __future__ import annotations

import csv
import re
from collections import Counter
from pathlib import Path

import pytest
from typer.testing import CliRunner

from conftest import TERM_START, write_essays
from hingeword import __version__
from hingeword.cli import app
from hingeword.history import Workspace

runner = CliRunner()


def _commands(group, prefix=()) -> list[list[str]]:
    """Every command and sub-command of the app, found by walking the click group."""
    out = [list(prefix)]
    for name, cmd in sorted(group.commands.items()):
        if getattr(cmd, "commands", None) is not None:  # a group (typer vendors its own click)
            out += _commands(cmd, (*prefix, name))
        else:
            out.append([*prefix, name])
    return out


def _all_commands() -> list[list[str]]:
    import typer.main

    return _commands(typer.main.get_command(app))


def _invoke(*args: str):
    return runner.invoke(app, list(args))


def _assert_one_error_line(result, expected: str) -> None:
    assert result.exit_code == 1, result.output
    assert result.stderr == f"Error: {expected}\n"
    assert result.stdout == ""
    assert "Traceback" not in result.output


@pytest.fixture
def in_tmp(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    return tmp_path


# ------------------------------------------------------------------ help


@pytest.mark.parametrize("command", _all_commands(), ids=lambda c: " ".join(c) or "hingeword")
def test_cli_help_of_every_command(command):
    result = _invoke(*command, "--help")
    assert result.exit_code == 0, result.output
    assert "Usage:" in result.stdout
    assert "Traceback" not in result.output


def test_cli_help_covers_the_documented_commands():
    found = _all_commands()
    for command in (["scan"], ["export"], ["concordance"], ["reference", "build"], ["reference", "list"],
                    ["reference", "info"]):
        assert command in found


def test_cli_version():
    result = _invoke("--version")
    assert result.exit_code == 0
    assert result.stdout == f"hingeword {__version__}\n"


# ------------------------------------------------------------------ scan


def test_cli_scan_missing_folder(in_tmp):
    result = _invoke("scan", "nowhere", "--class", "c", "--term", "t", "-w", "ws", "-q")
    _assert_one_error_line(result, "essay folder not found: nowhere")
    assert not (in_tmp / "ws").exists()


def test_cli_scan_missing_folder_long_path(tmp_path):
    """Rich must not wrap the error line at 80 columns (a long path stays on one line)."""
    missing = tmp_path / ("essays-of-the-evening-class-" * 3) / "autumn"
    result = _invoke("scan", str(missing), "--class", "c", "--term", "t", "-w", str(tmp_path / "ws"), "-q")
    _assert_one_error_line(result, f"essay folder not found: {missing}")


def test_cli_scan_missing_option_is_usage_error(in_tmp):
    (in_tmp / "essays").mkdir()
    result = _invoke("scan", "essays", "--term", "t")
    assert result.exit_code == 2
    assert "--class" in result.stderr


@pytest.mark.slow
def test_cli_scan_prints_summary(in_tmp, tiny_ref_path):
    write_essays(in_tmp / "essays")
    result = _invoke("scan", "essays", "--class", "evening-b1", "--term", "2026-spring", "-w", "ws", "-q",
                     "--reference", str(tiny_ref_path), "--min-reference", "5", "--min-rate-ratio", "1.5",
                     "--term-start", TERM_START, "--processes", "1")
    assert result.exit_code == 0, result.output
    out = result.stdout
    assert "evening-b1 / 2026-spring: 4 essays read, 2 skipped" in out
    assert "  skipped empty.txt: empty file\n" in out
    assert "  skipped notes.pdf: unsupported file type '.pdf' (use .txt, .docx, .odt or .csv)\n" in out
    assert "  spelling: 'dicuss' (VERB) counted as 'discuss'\n" in out
    assert "Over-used (candidates for your judgement, not verdicts):" in out
    assert "discuss about" in out
    with Workspace(in_tmp / "ws", create=False) as ws:
        assert [r.class_name for r in ws.runs()] == ["evening-b1"]


# ------------------------------------------------------------------ export


def test_cli_export_unknown_class(hand_run, in_tmp):
    result = _invoke("export", "--class", "nope", "--term", "t1", "-w", "ws", "-o", "out.csv")
    _assert_one_error_line(result, "no scan of class 'nope', term 't1' in ws (known: morning-a2/t1)")
    assert not (in_tmp / "out.csv").exists()


def test_cli_export_missing_workspace(in_tmp):
    result = _invoke("export", "--class", "c", "--term", "t", "-w", "nows", "-o", "out.csv")
    _assert_one_error_line(result, f"no workspace at {Path('nows').absolute()} (run 'hingeword scan' first, or give "
                                   "the workspace folder with --workspace)")
    assert not (in_tmp / "nows").exists()  # export never creates a workspace


def test_cli_export_bad_suffix(hand_run, in_tmp):
    result = _invoke("export", "--class", "morning-a2", "--term", "t1", "-w", "ws", "-o", "out.pdf")
    _assert_one_error_line(result, "cannot export to 'out.pdf': use a file ending in .csv, .xlsx or .json")


def test_cli_export_writes_csv(hand_run, in_tmp):
    result = _invoke("export", "--class", "morning-a2", "--term", "t1", "-w", "ws", "-o", "out/patterns.csv")
    assert result.exit_code == 0, result.output
    assert result.stderr == "wrote 2 patterns to out/patterns.csv\n"
    rows = list(csv.DictReader((in_tmp / "out" / "patterns.csv").read_text(encoding="utf-8").splitlines()))
    # rows in rank order: flagged first
    assert [(r["governor"], r["preposition"], r["flagged"], r["status"]) for r in rows] == [
        ("discuss", "about", "true", "over-used"), ("discuss", "-", "false", "under-used")]


# ------------------------------------------------------------------ concordance


def test_cli_concordance_lines_have_writer_ids(hand_run, in_tmp):
    result = _invoke("concordance", "discuss", "about", "--class", "morning-a2", "--term", "t1", "-w", "ws",
                     "--width", "12", "--names", "real")
    assert result.exit_code == 0, result.output
    lines = result.stdout.splitlines()
    # writer padded to the longest (never cut), left context right-aligned to --width, key in brackets;
    # a context cut short ends at a whole word with "…"
    assert lines == [
        f"{'lena':<5} {'I':>12} [discussed about] the rules…",
        f"{'marek':<5} {'They':>12} [discussed about] money.",
        f"{'zofia':<5} {'We':>12} [discussed about] the trip.",
    ]
    assert result.stderr == "3 lines\n"
    # by default writers are pseudonymised with the class's stable codes
    coded = _invoke("concordance", "discuss", "about", "--class", "morning-a2", "--term", "t1", "-w", "ws")
    assert [line.split()[0] for line in coded.stdout.splitlines()] == ["S01", "S02", "S03"]
    assert "lena" not in coded.stdout and "zofia" not in coded.stdout


def _object_run(workspace: Path) -> None:
    """A hand-made run where two writers wrote "listen music" (the direct-object slot)."""
    from conftest import essay

    from hingeword.extract import Attachment
    from hingeword.history import Workspace
    from hingeword.patterns import Tally
    from hingeword.reference import Reference
    from hingeword.score import Thresholds, score_patterns

    essays = [essay(f"{w}.txt", w, f"{w.title()} and I listen music at night.") for w in ("ana", "ben")]
    atts = []
    for e in essays:
        g, o = e.text.index("listen"), e.text.index("music")
        atts.append(Attachment(e.essay_id, e.writer, "listen", "VERB", "listen", "-", "dobj", e.text, 0,
                               g, g + 6, o, o + 5, object_class="idea"))
    ref = Reference(manifest={"name": "hand"}, patterns=Counter({("listen", "VERB", "to"): 40}))
    used = Thresholds(min_reference=5)
    with Workspace(workspace) as ws:
        ws.replace_run(class_name="morning-a2", term="t1",
                       run_meta={"tool_version": "test", "model": "none", "model_version": "-", "extractor_version": "5",
                                 "source": "hand", "words": 16, "settings": {**used.as_dict(), "term_start": "2026-01-05"},
                                 "reference": ref.manifest},
                       essays=essays, skipped=[], notes=[], attachments=atts,
                       records=score_patterns(Tally.from_attachments(atts), ref, used))


def test_cli_pattern_spelling_printed_is_accepted_everywhere(in_tmp):
    _object_run(Path("ws"))
    # the reports print "listen + object"; "listen object", "listen -" and a quoted "+ object" are the same
    spellings = [("listen", "+", "object"), ("listen", "object"), ("listen", "-"), ("listen", "+ object")]
    outs = [_invoke("concordance", *words, "--class", "morning-a2", "--term", "t1", "-w", "ws") for words in spellings]
    assert all(o.exit_code == 0 for o in outs), [o.output for o in outs]
    assert len({o.stdout for o in outs}) == 1 and "[listen music]" in outs[0].stdout, outs[0].stdout
    for words in spellings:  # and dismiss / restore take the same spellings
        done = _invoke("dismiss", *words, "--class", "morning-a2", "--reason", "taught", "-w", "ws")
        assert done.exit_code == 0 and "dismissed 'listen + object'" in done.stdout, done.output
        assert "Warning" not in done.stderr and "reports" in done.stderr  # it occurs; rebuild the reports
        undone = _invoke("restore", *words, "--class", "morning-a2", "-w", "ws")
        assert undone.exit_code == 0, undone.output
    # a pattern that never occurs in the class (the README's "think about") is accepted with a warning
    never = _invoke("dismiss", "think", "about", "--class", "morning-a2", "--reason", "r", "-w", "ws")
    assert never.exit_code == 0 and "Warning: 'think about' does not occur" in never.stderr


def test_cli_concordance_unknown_pattern(hand_run, in_tmp):
    result = _invoke("concordance", "talk", "of", "--class", "morning-a2", "--term", "t1", "-w", "ws")
    _assert_one_error_line(result, "no 'talk of' in morning-a2 / t1")


def test_cli_one_pattern_spelling_accepted_everywhere(hand_run, in_tmp):
    """The screens spell the direct-object slot "+ object"; every command takes that, "object" and "-"."""
    for spelling in (["discuss", "object"], ["discuss", "+", "object"], ["discuss", "-"]):
        result = _invoke("concordance", spelling[0], " ".join(spelling[1:]), "--class", "morning-a2", "--term", "t1",
                         "-w", "ws")
        assert result.exit_code == 1 and "no 'discuss + object' in morning-a2 / t1" in result.stderr
    dismissed = _invoke("dismiss", "discuss", "object", "--class", "morning-a2", "--reason", "r", "-w", "ws")
    assert dismissed.stdout == "dismissed 'discuss + object' for morning-a2: r\n"
    restored = _invoke("restore", "discuss", "+ object", "--class", "morning-a2", "-w", "ws")
    assert restored.stdout == "restored 'discuss + object' for morning-a2\n"


def test_cli_dismiss_of_an_absent_pattern_warns(hand_run, in_tmp):
    result = _invoke("dismiss", "think", "about", "--class", "morning-a2", "--reason", "fine", "-w", "ws")
    assert result.exit_code == 0
    assert "Warning: 'think about' does not occur in any stored run of morning-a2" in result.stderr
    assert "Rebuild the reports" in result.stderr


def test_cli_restore_checks_the_class(hand_run, in_tmp):
    result = _invoke("restore", "discuss", "about", "--class", "nope", "-w", "ws")
    _assert_one_error_line(result, "no scans of class 'nope' in ws (known: morning-a2)")


@pytest.mark.slow
def test_cli_concordance_of_a_real_scan(scanned):
    workspace, result = scanned
    out = _invoke("concordance", "discuss", "about", "--class", "evening-b1", "--term", "2026-spring",
                  "-w", str(workspace), "--names", "real")
    assert out.exit_code == 0, out.output
    lines = out.stdout.splitlines()
    assert len(lines) == 5
    # ben wrote "discussed about" and "dicuss about"
    assert sorted(line.split()[0] for line in lines) == ["anna", "ben", "ben", "carla", "dawid"]
    assert any("[dicuss about]" in line for line in lines)  # the misspelling is shown as written


# ------------------------------------------------------------------ reference


def test_cli_reference_info_missing(in_tmp):
    result = _invoke("reference", "info", "no-such-ref", "-w", "ws")
    assert result.exit_code == 1
    assert result.stderr.startswith("Error: unknown reference 'no-such-ref' (known: ")
    assert result.stderr.count("\n") == 1
    assert "Traceback" not in result.output


def test_cli_reference_build_list_info(in_tmp):
    from conftest import CONLLU_DIR

    result = _invoke("reference", "build", str(CONLLU_DIR), "--name", "gold", "--format", "conllu", "-w", "ws",
                     "--licence", "CC0 (invented)", "--build-date", "2026-01-05", "-q")
    assert result.exit_code == 0, result.output
    assert result.stdout == ("built gold at ws/references/gold: 1 files, 61 words, 10 attachments, "
                             "parser gold (CoNLL-U) -\n")

    listed = _invoke("reference", "list", "-w", "ws")
    assert listed.exit_code == 0
    assert any(line.startswith("gold ") and "61 words" in line for line in listed.stdout.splitlines())

    info = _invoke("reference", "info", "gold", "-w", "ws")
    assert info.exit_code == 0, info.output
    fields = {line[:18].strip(): line[19:] for line in info.stdout.splitlines()}  # "key<18> value"
    assert fields["name"] == "gold"
    assert fields["licence"] == "CC0 (invented)"
    assert (fields["words"], fields["attachments"], fields["patterns"]) == ("61", "10", "10")
    assert fields["build_date"] == "2026-01-05"
    assert fields["limits"] == ""
    assert fields["path"] == "ws/references/gold"


def test_cli_reference_build_bad_source(in_tmp):
    result = _invoke("reference", "build", "missing", "--name", "x", "--format", "conllu", "-w", "ws", "-q")
    _assert_one_error_line(result, "reference source folder not found: missing")


def test_cli_export_concordance_and_decisions(hand_run, in_tmp):
    dismissed = _invoke("dismiss", "discuss", "about", "--class", "morning-a2", "--reason", "taught already",
                        "-w", "ws")
    assert dismissed.exit_code == 0, dismissed.output
    result = _invoke("export", "--class", "morning-a2", "--term", "t1", "-w", "ws", "-o", "p.csv",
                     "--concordance", "k.csv")
    assert result.exit_code == 0, result.output
    patterns = list(csv.DictReader(Path("p.csv").read_text(encoding="utf-8").splitlines()))
    about = next(r for r in patterns if (r["governor"], r["preposition"]) == ("discuss", "about"))
    assert about["dismissed"] == "true" and about["dismissed_reason"] == "taught already"
    lines = list(csv.DictReader(Path("k.csv").read_text(encoding="utf-8").splitlines()))
    assert list(lines[0])[:5] == ["writer", "essay_id", "governor", "governor_pos", "preposition"]
    keys = [line["key"] for line in lines if line["preposition"] == "about"]
    assert keys == ["discussed about"] * 3
    assert {line["writer"] for line in lines} <= {"S01", "S02", "S03"}  # pseudonymised by default
    # the essay is named without its file name: the writer's code and the essay's number
    assert all(re.fullmatch(r"S0[1-3]-e1", line["essay_id"]) for line in lines), [line["essay_id"] for line in lines]


def test_cli_help_has_plain_words_and_every_option_explained():
    import typer

    root = typer.main.get_command(app)
    commands = []
    for name, cmd in root.commands.items():
        subs = getattr(cmd, "commands", None)
        commands += [((name, sub), c) for sub, c in subs.items()] if subs else [((name,), cmd)]
    assert len(commands) > 10
    for words, cmd in commands:
        undocumented = [p.name for p in cmd.params if not (getattr(p, "help", None) or "").strip()]
        assert not undocumented, (words, undocumented)
        shown = _invoke(*words, "--help")
        assert shown.exit_code == 0, shown.output
        for artefact in ("<bool>", "<str>", "<path>", "<list", "<int", "<float", "{"):
            assert artefact not in shown.output, (words, artefact)
