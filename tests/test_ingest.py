"""Tests for hingeword.ingest.

All essays, sentences and names below are invented for these tests.
Fixtures are built in ``tmp_path``; the .docx is made with python-docx and the
.odt with odfpy inside the tests.
"""

from __future__ import annotations

import hashlib
import io
import os
import re
import zipfile
from pathlib import Path

import docx
import pytest
from odf.opendocument import OpenDocumentText
from odf.text import H, P
from rapidfuzz import fuzz

from hingeword.errors import IngestError
from hingeword.ingest import Essay, IngestResult, NearDuplicate, Skipped, read_essays

# Invented essay, about 300 words.
GARDEN = (
    "Last spring our class decided to build a small garden behind the school gym. At "
    "first most of us were not very interested in the idea, because the ground there "
    "was hard and full of stones, and nobody wanted to spend the afternoons digging. "
    "Our biology teacher, however, was sure that we could change the place into "
    "something green and useful before the summer holidays. She divided us into four "
    "groups and gave every group a different job. One group cleaned the ground and "
    "carried away the stones, another group built wooden boxes for the soil, the third "
    "group chose the plants, and the last group made a plan for watering. I was in the "
    "group that chose the plants, so I spent several evenings reading about vegetables "
    "that grow quickly in a cool climate. We decided on beans, lettuce, radishes and a "
    "few tomato plants, and we also added sunflowers because my friend Tomasz said that "
    "a garden without flowers is only a field. The work was slower than we expected. It "
    "rained for two weeks in April, and the boxes filled with water, so we had to drill "
    "holes in the bottom of each one. Some students lost their patience and stopped "
    "coming, but the rest of us continued, and slowly the first green leaves appeared. "
    "In May we ate our first radishes during the lunch break, and even the students who "
    "had laughed at the project wanted to taste them. Now the garden is part of the "
    "school, and the younger classes take care of it every week. I learned that a "
    "project like this depends more on patience than on strength, and that working "
    "together with people you do not know well can become the best part of the school "
    "year. Next spring I would like to add a small pond for frogs."
)

# A second invented essay of similar length on another topic.
TRAIN = (
    "When I was twelve years old, I travelled alone by train for the first time, from "
    "our small town to the city where my grandmother lives. My parents were worried "
    "about the journey, and my mother wrote the names of all the stations on a piece of "
    "paper which she put into my jacket pocket. The train left very early in the "
    "morning, when the sky was still dark and the platform was almost empty. I remember "
    "the smell of coffee from the little kiosk and the cold metal of the bench where I "
    "waited with my bag. During the first hour I looked out of the window the whole "
    "time, counting cows and trying to read the names of the villages we passed. Later "
    "an old man sat opposite me and started to tell me stories about the years when he "
    "worked on the railway as a young engineer. He explained how the signals work, why "
    "the trains sometimes stop in the middle of nowhere, and how the drivers talk to "
    "each other by radio. I was so interested in his stories that I almost missed my "
    "station. When the conductor called the name of the city, I jumped up, grabbed my "
    "bag and ran to the door just before it closed. My grandmother was standing on the "
    "platform with a big umbrella, although it was not raining, and she hugged me as if "
    "I had returned from another continent. That week we visited museums, walked in the "
    "old park and baked bread together in her tiny kitchen. On the way back I was no "
    "longer afraid, and I even helped a younger girl find her seat. Since that trip I "
    "have always loved trains, and I still keep the piece of paper with the station "
    "names in a drawer at home."
)

GOOD = "We discussed the plan for the weekend and agreed to meet at the station."


def _write(path: Path, data: str | bytes) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    if isinstance(data, str):
        path.write_text(data, encoding="utf-8", newline="")
    else:
        path.write_bytes(data)
    return path


def _make_docx(path: Path, paragraphs: list[str]) -> None:
    document = docx.Document()
    for text in paragraphs:
        document.add_paragraph(text)
    path.parent.mkdir(parents=True, exist_ok=True)
    document.save(str(path))


def _make_odt(path: Path, heading: str, paragraphs: list[str]) -> None:
    document = OpenDocumentText()
    document.text.addElement(H(outlinelevel=1, text=heading))
    for text in paragraphs:
        document.text.addElement(P(text=text))
    path.parent.mkdir(parents=True, exist_ok=True)
    document.save(str(path))


def _symlink(target: Path | str, link: Path, *, is_dir: bool = False) -> None:
    try:
        os.symlink(target, link, target_is_directory=is_dir)
    except (OSError, NotImplementedError) as exc:  # e.g. Windows without the privilege
        pytest.skip(f"cannot create symbolic links here: {exc}")


def _ids(result: IngestResult) -> list[str]:
    return [e.essay_id for e in result.essays]


def _by_id(result: IngestResult) -> dict[str, Essay]:
    return {e.essay_id: e for e in result.essays}


# --- formats ---------------------------------------------------------------------

def test_ingest_reads_txt_docx_odt_and_csv(tmp_path):
    _write(tmp_path / "anna.txt", "Anna wrote this.\r\nSecond line.\rThird line.\n")
    _make_docx(tmp_path / "boris.docx", ["First paragraph here.", "Second paragraph here."])
    _make_odt(tmp_path / "chiara.odt", "My holidays", ["We went to the sea.", "It was warm."])
    _write(tmp_path / "class.csv", "writer,text\ndmitri,I depend of my parents.\n")

    result = read_essays(tmp_path)

    assert result.skipped == []
    essays = _by_id(result)
    assert list(essays) == ["anna.txt", "boris.docx", "chiara.odt", "class.csv#1"]
    assert essays["anna.txt"].text == "Anna wrote this.\nSecond line.\nThird line."
    assert essays["boris.docx"].text == "First paragraph here.\nSecond paragraph here."
    assert essays["chiara.odt"].text == "My holidays\nWe went to the sea.\nIt was warm."
    assert essays["class.csv#1"].text == "I depend of my parents."
    assert [e.encoding for e in result.essays] == ["utf-8", "docx", "odt", "utf-8"]
    assert [e.writer for e in result.essays] == ["anna", "boris", "chiara", "dmitri"]
    assert [e.source for e in result.essays] == ["anna.txt", "boris.docx", "chiara.odt",
                                                "class.csv"]


def test_ingest_normalises_text_and_hashes_it(tmp_path):
    # "café" written with a combining accent (NFD), a BOM, CRLF and surrounding space.
    raw = "\ufeff  Le cafe\u0301 was closed.\r\nWe waited outside.  \n\n"
    _write(tmp_path / "eva.txt", raw.encode("utf-8"))

    (essay,) = read_essays(tmp_path).essays

    assert essay.text == "Le caf\u00e9 was closed.\nWe waited outside."
    assert essay.sha256 == hashlib.sha256(essay.text.encode("utf-8")).hexdigest()
    assert essay.encoding == "utf-8"


def test_ingest_word_count_counts_letter_runs(tmp_path):
    _write(tmp_path / "a.txt", "It's a well-known fact: Anna’s 3 cats don't like rain_water.")
    _write(tmp_path / "b.txt", "Two words.")

    result = read_essays(tmp_path)

    # It's / a / well-known / fact / Anna’s / cats / don't / like / rain / water
    assert [e.word_count for e in result.essays] == [10, 2]
    assert result.word_count == 12


# --- encodings -------------------------------------------------------------------

# Invented sentences. Decoding checked with charset-normalizer 3.5.3, whose own
# first choice is wrong for WESTERN in cp1252 and latin-1 (cp775: "M³ller", "na’ve")
# and for POLISH (cp1252: "Pawe³"); ingest re-ranks the guesses (see _decode). Known limit: a few Turkish,
# Baltic or Greek letters among English words are often read as another code page.
WESTERN = ("Last summer my friend Müller and I sat in a small café near the river, and "
           "we talked about how naïve we were when we first arrived in the city.")
POLISH = ("In my opinion, Paweł and Łukasz were right when they said that the żubr is "
          "the biggest animal in Poland; we discussed about it in the class for an hour.")
RUSSIAN = ("Мой друг сказал, что мы должны обсудить этот вопрос завтра утром, потому что "
           "сегодня у нас нет времени для длинной дискуссии о погоде.")
GREEK = ("Ο φίλος μου είπε ότι πρέπει να συζητήσουμε αυτό το θέμα αύριο το πρωί, επειδή "
         "σήμερα δεν έχουμε χρόνο.")
CHINESE = "我们昨天讨论了这个问题，老师说我们应该更加注意介词的用法。"
QUOTES = ("It’s my friend’s opinion that we shouldn’t depend of the weather – “never”, "
          "he said.")


@pytest.mark.parametrize("text, codec, expected", [
    (WESTERN, "cp1252", "cp1252"),
    (WESTERN, "latin-1", "cp1252"),      # same bytes as cp1252 for these letters
    (QUOTES, "cp1252", "cp1252"),
    (POLISH, "cp1250", "cp1250"),
    (RUSSIAN, "cp1251", "cp1251"),
    (RUSSIAN, "koi8-r", "koi8-r"),
    (GREEK, "cp1253", "cp1253"),
    (CHINESE, "gb18030", "gb18030"),
    (WESTERN, "utf-8-sig", "utf-8"),
    (WESTERN, "utf-16", "utf-16"),       # with BOM, as Windows Notepad saves "Unicode"
])
def test_ingest_detects_encoding(tmp_path, text, codec, expected):
    _write(tmp_path / "essay.txt", text.encode(codec))

    result = read_essays(tmp_path)

    assert result.skipped == []
    (essay,) = result.essays
    assert essay.text == text
    assert essay.encoding == expected


# --- one bad file among good ones -----------------------------------------------

def _zip_without_docx_parts() -> bytes:
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w") as archive:
        archive.writestr("notes.txt", "just a zip")
    return buffer.getvalue()


@pytest.mark.parametrize("name, data, reason", [
    ("empty.txt", b"", "empty file"),
    ("blank.txt", b" \r\n\t\n", "empty file"),
    ("blank.docx", None, "empty file"),
    ("image.txt", b"GIF89a\x01\x00\x01\x00\x00\xff", "binary file (not text)"),
    ("scan.pdf", b"%PDF-1.4 fake", "unsupported file type '.pdf' (use .txt, .docx, .odt or .csv)"),
    ("README", b"notes", "file has no extension (use .txt, .docx, .odt or .csv)"),
    ("noise.txt", bytes(range(1, 256)) * 4, "encoding could not be detected (save it as UTF-8, or give --encoding)"),
    ("renamed.docx", b"plain text, not Word",
     "could not be read as .docx: not a .docx file (damaged, or another format renamed)"),
    ("broken.odt", b"PK\x03\x04 truncated",
     "could not be read as .odt: not a .odt file (damaged, or another format renamed)"),
    ("other.docx", _zip_without_docx_parts(),
     "could not be read as .docx: not a .docx document: it has no word/document.xml "
     "(damaged, or another format renamed)"),
    (".DS_Store", b"\x00\x00\x00\x01Bud1", "system file"),
    ("Thumbs.db", b"\xd0\xcf\x11\xe0", "system file"),
    ("desktop.ini", b"[.ShellClassInfo]", "system file"),
    ("~$essay.docx", b"\x05lock", "system file"),
    (".draft.txt", b"a hidden draft", "hidden file (rename it without the leading '.' to read it)"),
    ("table.csv", b"name,essay\nanna,Some text.\n", "CSV has no 'writer' and 'text' columns"),
    ("list.csv", b"file,writer\na.txt,anna\n",
     "CSV has no 'writer' and 'text' columns (it looks like a manifest: pass it as the "
     "manifest instead)"),
    ("rows.csv", b"writer,text\nanna,Fine text.\nboris,\n", "empty text in CSV row 2"),
    ("who.csv", b"writer,text\n,Text without a writer.\n",
     "empty writer in CSV row 1 (fill in the 'writer' column)"),
])
def test_ingest_skips_bad_file_and_reads_the_rest(tmp_path, name, data, reason):
    _write(tmp_path / "good.txt", GOOD)
    if data is None:
        _make_docx(tmp_path / name, [])
    else:
        _write(tmp_path / name, data)

    result = read_essays(tmp_path)

    assert result.skipped == [Skipped(name, reason)]
    assert "good.txt" in _ids(result)
    assert _by_id(result)["good.txt"].text == GOOD


def test_ingest_skips_file_over_size_limit(tmp_path):
    _write(tmp_path / "good.txt", GOOD)
    _write(tmp_path / "huge.txt", b"word " * 680_000)  # 3.4 MB

    result = read_essays(tmp_path)

    assert result.skipped == [Skipped("huge.txt", "larger than 2 MB limit (3.4 MB)")]
    assert _ids(result) == ["good.txt"]
    small = read_essays(tmp_path, max_bytes=50)
    assert Skipped("good.txt", "larger than 50 bytes limit (72 bytes)") in small.skipped


def test_ingest_lists_hidden_and_system_folders_once(tmp_path):
    _write(tmp_path / "good.txt", GOOD)
    _write(tmp_path / ".git" / "config", "[core]")
    _write(tmp_path / "__MACOSX" / "._good.txt", b"\x00\x05\x16\x07")

    result = read_essays(tmp_path)

    assert result.skipped == [
        Skipped(".git", "hidden folder (rename it without the leading '.' to read it)"),
        Skipped("__MACOSX", "system folder"),
    ]
    assert _ids(result) == ["good.txt"]


# --- writer ids and manifest -----------------------------------------------------

def test_ingest_writer_is_top_level_subfolder_or_file_stem(tmp_path):
    _write(tmp_path / "anna" / "week1" / "letter.txt", "Dear friend, I am fine.")
    _write(tmp_path / "anna" / "story.txt", "Once there was a fox.")
    _write(tmp_path / "boris" / "story.txt", "My dog likes snow.")
    _write(tmp_path / "chiara_essay.txt", "I listen music every day.")

    result = read_essays(tmp_path)

    assert [(e.essay_id, e.writer) for e in result.essays] == [
        ("anna/story.txt", "anna"),
        ("anna/week1/letter.txt", "anna"),
        ("boris/story.txt", "boris"),
        ("chiara_essay.txt", "chiara_essay"),
    ]


def test_ingest_manifest_overrides_writer_and_adds_metadata(tmp_path):
    essays = tmp_path / "essays"
    _write(essays / "e1.txt", "I am agree with this idea.")
    _write(essays / "week2" / "e2.txt", "She explained me the rule.")
    _write(essays / "e3.txt", "Nobody is named in the manifest for this one.")
    _write(essays / "table.csv", "writer,text,level\nzoe,I married with him.,\n")
    # Excel-style: BOM, semicolons, capitalised headers, a Windows path, extra columns.
    manifest = _write(tmp_path / "manifest.csv", (
        "\ufeffFile;Writer;L1;Level;Task;Term;Age\r\n"
        "e1.txt;S01;pl;B1;opinion;2024 autumn;16\r\n"
        "week2\\e2.txt;S02;es;;letter;2024 autumn;\r\n"
        "table.csv;ignored;de;A2;story;;\r\n"
    ).encode("utf-8"))

    result = read_essays(essays, manifest=manifest)

    assert result.skipped == []
    got = _by_id(result)
    assert got["e1.txt"].writer == "S01"
    assert (got["e1.txt"].l1, got["e1.txt"].level, got["e1.txt"].task) == ("pl", "B1", "opinion")
    assert got["e1.txt"].meta == (("Age", "16"), ("Term", "2024 autumn"))
    assert got["week2/e2.txt"].writer == "S02"
    assert (got["week2/e2.txt"].l1, got["week2/e2.txt"].level) == ("es", None)
    assert got["week2/e2.txt"].meta == (("Term", "2024 autumn"),)
    assert got["e3.txt"].writer == "e3"
    assert (got["e3.txt"].l1, got["e3.txt"].meta) == (None, ())
    # A CSV table keeps each row's writer; the manifest fills what the row leaves empty.
    assert got["table.csv#1"].writer == "zoe"
    assert (got["table.csv#1"].l1, got["table.csv#1"].level) == ("de", "A2")


def test_ingest_manifest_bad_rows_are_skipped_not_fatal(tmp_path):
    essays = tmp_path / "essays"
    _write(essays / "a.txt", "I am agree with you.")
    _write(essays / "b.txt", "He is married with a doctor.")
    _write(tmp_path / "secret.txt", "Not an essay of this class.")
    manifest = _write(essays / "manifest.csv", (
        "file,writer\n"
        "a.txt,S01\n"
        "../secret.txt,S99\n"
        "missing.txt,S02\n"
        "a.txt,S03\n"
        "b.txt,\n"
    ))

    result = read_essays(essays, manifest=manifest)

    assert result.skipped == []  # problems of the manifest, not skipped essays
    assert result.manifest_problems == [
        Skipped("manifest.csv:line 3", "manifest row points outside the essay folder: ../secret.txt"),
        Skipped("manifest.csv:line 4", "manifest row names a file that does not exist: missing.txt"),
        Skipped("manifest.csv:line 5", "manifest row repeats a.txt, already listed on line 2"),
        Skipped("manifest.csv:line 6",
                "manifest row has no writer for b.txt (the file keeps its default writer id)"),
    ]
    # The manifest inside the essay folder is not read as an essay table.
    assert [(e.essay_id, e.writer) for e in result.essays] == [("a.txt", "S01"), ("b.txt", "b")]


def test_ingest_manifest_missing_or_without_columns_raises(tmp_path):
    _write(tmp_path / "essays" / "a.txt", GOOD)
    with pytest.raises(IngestError, match="manifest file not found: .*nowhere.csv"):
        read_essays(tmp_path / "essays", manifest=tmp_path / "nowhere.csv")
    bad = _write(tmp_path / "list.csv", "filename,student\na.txt,S01\n")
    with pytest.raises(IngestError, match=r"lacks the column\(s\) file, writer"):
        read_essays(tmp_path / "essays", manifest=bad)


def test_ingest_missing_folder_raises_with_path(tmp_path):
    missing = tmp_path / "no_such_class"
    with pytest.raises(IngestError) as info:
        read_essays(missing)
    assert str(info.value) == f"essay folder not found: {missing}"
    a_file = _write(tmp_path / "single.txt", GOOD)
    with pytest.raises(IngestError, match="not a folder: .*single.txt"):
        read_essays(a_file)


# --- CSV essay tables ------------------------------------------------------------

def test_ingest_csv_table_rows_become_essays(tmp_path):
    rows = "".join(f'w{n},"Essay number {n}, written on time.",pl\n' for n in range(1, 12))
    _write(tmp_path / "class" / "table.csv",
           "Writer,TEXT,l1,Task,Date\n"
           'anna,"First line.\nSecond line, with a comma.",pl,story,2024-03-01\n'
           ",,,,\n"
           + rows)
    _write(tmp_path / "semi.csv", 'writer;text;level\nboris;"Essay with semicolons; really.";B2\n')

    result = read_essays(tmp_path)

    assert result.skipped == []
    got = _by_id(result)
    first = got["class/table.csv#1"]
    assert first.writer == "anna"
    assert first.text == "First line.\nSecond line, with a comma."
    assert (first.l1, first.task) == ("pl", "story")
    assert first.meta == (("Date", "2024-03-01"),)
    assert first.source == "class/table.csv"
    # Row 2 is blank and ignored; numbering stays that of the data rows.
    assert "class/table.csv#2" not in got
    # ... and #10 .. #13 sort after #9.
    assert _ids(result) == (["class/table.csv#1"]
                            + [f"class/table.csv#{n}" for n in range(3, 14)] + ["semi.csv#1"])
    assert got["class/table.csv#13"].writer == "w11"
    assert (got["semi.csv#1"].text, got["semi.csv#1"].level) == ("Essay with semicolons; really.", "B2")


# --- symbolic links --------------------------------------------------------------

def test_ingest_symlink_outside_folder_is_skipped(tmp_path):
    essays = tmp_path / "essays"
    _write(essays / "good.txt", GOOD)
    _write(tmp_path / "private" / "diary.txt", "Private text that must not be read.")
    _symlink(tmp_path / "private" / "diary.txt", essays / "diary.txt")
    _symlink(tmp_path / "private", essays / "more", is_dir=True)

    result = read_essays(essays)

    assert result.skipped == [
        Skipped("diary.txt", "symbolic link leading outside the essay folder"),
        Skipped("more", "symbolic link leading outside the essay folder"),
    ]
    assert _ids(result) == ["good.txt"]


def test_ingest_symlink_inside_folder_is_followed_once(tmp_path):
    essays = tmp_path / "essays"
    _write(essays / "anna" / "story.txt", "Once there was a fox.")
    _write(essays / ".store" / "alex.txt", "My dog likes snow.")
    _symlink(Path(".store") / "alex.txt", essays / "alex.txt")             # followed
    _symlink(Path("anna"), essays / "again", is_dir=True)                   # same folder twice
    _symlink(Path(".."), essays / "anna" / "up", is_dir=True)              # a loop
    _symlink(Path("anna") / "story.txt", essays / "copy.txt")               # same file twice
    _symlink(Path("gone.txt"), essays / "broken.txt")

    result = read_essays(essays)

    assert [(e.essay_id, e.writer, e.text) for e in result.essays] == [
        ("alex.txt", "alex", "My dog likes snow."),
        ("anna/story.txt", "anna", "Once there was a fox."),
    ]
    assert result.skipped == [
        Skipped(".store", "hidden folder (rename it without the leading '.' to read it)"),
        Skipped("again", "symbolic link to a folder already read as 'anna'"),
        Skipped("anna/up", "symbolic link to a folder already read as '.'"),
        Skipped("broken.txt", "broken symbolic link (its target is missing)"),
        Skipped("copy.txt", "same file as 'anna/story.txt' (reached again through a symbolic link)"),
    ]


def test_ingest_folder_given_through_a_symlink(tmp_path):
    _write(tmp_path / "real" / "anna.txt", GOOD)
    _symlink(tmp_path / "real", tmp_path / "alias", is_dir=True)

    result = read_essays(tmp_path / "alias")

    assert (_ids(result), result.skipped) == (["anna.txt"], [])


# --- duplicates ------------------------------------------------------------------

def test_ingest_exact_duplicates_grouped_and_kept(tmp_path):
    _write(tmp_path / "anna.txt", GARDEN)
    _write(tmp_path / "boris.txt", GARDEN + "\n")      # same text after normalising
    _make_docx(tmp_path / "zoe.docx", [GARDEN])
    _write(tmp_path / "chiara.txt", TRAIN)

    result = read_essays(tmp_path)

    assert _ids(result) == ["anna.txt", "boris.txt", "chiara.txt", "zoe.docx"]
    assert result.duplicates == [("anna.txt", "boris.txt", "zoe.docx")]
    assert result.near_duplicates == []


def test_ingest_near_duplicate_reported_different_essay_not(tmp_path):
    assert 290 <= len(GARDEN.split()) <= 310 and 290 <= len(TRAIN.split()) <= 330
    changed = GARDEN.replace("cool climate", "cold climate")
    assert changed != GARDEN
    _write(tmp_path / "anna.txt", GARDEN)
    _write(tmp_path / "boris.txt", changed)
    _write(tmp_path / "chiara.txt", TRAIN)
    _write(tmp_path / "dmitri.txt", GARDEN.upper())   # differs only by case: ratio 100

    result = read_essays(tmp_path)

    pairs = {(p.first, p.second): p.similarity for p in result.near_duplicates}
    assert set(pairs) == {("anna.txt", "boris.txt"), ("anna.txt", "dmitri.txt"),
                          ("boris.txt", "dmitri.txt")}
    assert 99 < pairs[("anna.txt", "boris.txt")] < 100
    assert pairs[("anna.txt", "dmitri.txt")] == 100
    assert result.near_duplicates[0] == NearDuplicate("anna.txt", "dmitri.txt", 100.0)
    assert result.duplicates == []


def _fuzzy(text: str) -> str:
    """The comparison form, as the interface defines it: lower-cased, punctuation
    removed, whitespace collapsed."""
    return " ".join(re.sub(r"[^\w\s]|_", "", text.lower()).split())


def test_ingest_near_duplicate_length_shortcut_loses_nothing(tmp_path):
    # Texts of many lengths; the length pre-filter must find every pair that a
    # brute-force comparison of all pairs finds.
    words = GARDEN.split()
    texts = {f"g{n:03d}.txt": " ".join(words[:n]) for n in range(120, 300, 9)}
    texts.update({f"t{n:03d}.txt": " ".join(TRAIN.split()[:n]) for n in (150, 200)})
    for name, text in texts.items():
        _write(tmp_path / name, text)

    for threshold in (60.0, 80.0, 95.0):
        result = read_essays(tmp_path, near_duplicate_threshold=threshold)
        found = {(p.first, p.second) for p in result.near_duplicates}
        names = sorted(texts)
        brute = {(a, b) for i, a in enumerate(names) for b in names[i + 1:]
                 if fuzz.ratio(_fuzzy(texts[a]), _fuzzy(texts[b])) >= threshold}
        assert found == brute
        assert found, "the fixture should produce some pairs at each threshold"


# --- determinism -----------------------------------------------------------------

def _build_tree(root: Path, reverse: bool) -> None:
    files = [
        ("b/2.txt", "Second file of b."), ("a-c.txt", "A file with a dash."),
        ("a/z.txt", "Last file of a."), ("a/b/1.txt", "Deep file."),
        ("Z.txt", "Capital name."), ("a/10.txt", "Ten."),
    ]
    for rel, text in (reversed(files) if reverse else files):
        _write(root / rel, text)


def test_ingest_ids_and_order_are_deterministic(tmp_path):
    _build_tree(tmp_path / "one", reverse=False)
    _build_tree(tmp_path / "two", reverse=True)

    first = read_essays(tmp_path / "one")
    second = read_essays(tmp_path / "two")

    expected = ["Z.txt", "a/10.txt", "a/b/1.txt", "a/z.txt", "a-c.txt", "b/2.txt"]
    assert _ids(first) == expected
    assert [(e.essay_id, e.sha256) for e in first.essays] == \
           [(e.essay_id, e.sha256) for e in second.essays]
    assert read_essays(tmp_path / "one") == first


def test_ingest_never_prints(tmp_path, capsys):
    _write(tmp_path / "good.txt", GOOD)
    _write(tmp_path / "bad.pdf", b"%PDF")
    read_essays(tmp_path)
    assert capsys.readouterr() == ("", "")


def test_ingest_forced_encoding_reads_what_detection_misses(tmp_path):
    # Turkish in cp1254 among English words: detection alone tends to pick cp1252
    # ("Ayþe"); --encoding cp1254 gives the right letters. Text invented for the test.
    folder = tmp_path / "essays"
    folder.mkdir()
    text = "My friend Ayşe and I discussed the plan in Istanbul, near the Boğaz, last summer."
    (folder / "ayse.txt").write_bytes(text.encode("cp1254"))
    (folder / "plain.txt").write_text("We talked about the weather.", encoding="utf-8")
    forced = read_essays(folder, encoding="cp1254")
    by_id = {e.essay_id: e for e in forced.essays}
    assert by_id["ayse.txt"].text == text and by_id["ayse.txt"].encoding == "cp1254"
    assert by_id["plain.txt"].encoding == "utf-8"  # UTF-8 files are read as UTF-8 whatever is forced


def test_ingest_forced_encoding_that_does_not_fit_is_skipped(tmp_path):
    folder = tmp_path / "essays"
    folder.mkdir()
    (folder / "x.txt").write_bytes("Zoë went to the café.".encode("cp1252") + b"\x81\x8d")
    result = read_essays(folder, encoding="cp1253")  # 0x81 is undefined in cp1253
    assert [s.reason for s in result.skipped] == ["does not decode as cp1253 (check --encoding)"]


def test_ingest_unknown_encoding_is_a_clear_error(tmp_path):
    with pytest.raises(IngestError, match="unknown encoding 'klingon-8'"):
        read_essays(tmp_path, encoding="klingon-8")


def test_ingest_manifest_names_case_twins_and_first_languages_that_are_not_codes(tmp_path):
    essays = tmp_path / "essays"
    _write(essays / "Lucia_R.txt", "We arrived to Rome at night.")
    _write(essays / "ben.txt", "We arrived to Tokyo at night.")
    manifest = _write(tmp_path / "manifest.csv", "file,writer,l1\nlucia_r.txt,Lucía Romero,es\nben.txt,Ben,Spanish\n")
    result = read_essays(essays, manifest=manifest)
    assert result.skipped == []
    assert [(p.source, p.reason) for p in result.manifest_problems] == [
        ("manifest.csv:line 2", "manifest row names a file that does not exist: lucia_r.txt (the folder has "
                                "'Lucia_R.txt', which differs only in case: write the name exactly)"),
        ("manifest.csv:line 3", "first language 'Spanish' of ben.txt is not an ISO 639-1 code such as 'es' or "
                                "'pt-br': the essay is read, but no first-language note applies to it"),
    ]
    assert sorted(e.essay_id for e in result.essays) == ["Lucia_R.txt", "ben.txt"]  # both read all the same


def test_ingest_one_csv_file_of_essays_is_accepted(tmp_path):
    table = _write(tmp_path / "class.csv", 'writer,text\nAna,"We discussed about the plan."\nBen,"They discussed about money."\n')
    result = read_essays(table)
    assert [e.writer for e in result.essays] == ["Ana", "Ben"] and result.skipped == []
