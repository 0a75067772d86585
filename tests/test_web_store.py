"""Uploaded files on the web page (hingeword.web.store): checked names, zip bounds, folders,
manifests. No web framework and no parser needed. Essays are invented."""

from __future__ import annotations

import io
import json
import stat
import zipfile

import pytest

from hingeword.errors import HingewordError
from hingeword.web import store
from hingeword.web.store import Upload


def up(name: str, data: bytes | str) -> Upload:
    return Upload(name, io.BytesIO(data.encode() if isinstance(data, str) else data))


def make_zip(entries: dict[str, bytes | str], *, links: dict[str, str] | None = None) -> bytes:
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as zf:
        for name, data in entries.items():
            zf.writestr(name, data)
        for name, target in (links or {}).items():
            info = zipfile.ZipInfo(name)
            info.external_attr = (stat.S_IFLNK | 0o777) << 16
            zf.writestr(info, target)
    return buf.getvalue()


@pytest.fixture
def term(tmp_path) -> store.TermFolder:
    return store.save_term(tmp_path / "ws", "evening-b1", "2026-spring", "2026-01-10")


def tree(folder: store.TermFolder) -> list[str]:
    return [name for name, _ in folder.files()]


def test_store_keys_are_unique_and_safe():
    assert store.key("10B") != store.key("10b")
    assert store.key("../../etc").startswith("etc-")
    assert "/" not in store.key("a/b") and "." not in store.key("..")


@pytest.mark.parametrize("name,expected", [
    ("anna.txt", ["anna.txt"]),
    ("Lucía Romero/essay 1.docx", ["Lucía Romero", "essay 1.docx"]),
    ("a\\b\\c.txt", ["a", "b", "c.txt"]),
    ("what?*<>|.txt", ["what_____.txt"]),
    ("con.txt", ["_con.txt"]),
    ("name. ", ["name"]),
    (".DS_Store", [".DS_Store"]),  # kept, so the scan lists it as a system file
])
def test_store_safe_parts(name, expected):
    assert store.safe_parts(name) == expected


@pytest.mark.parametrize("name,reason", [
    ("../evil.txt", "'..'"), ("a/../../evil.txt", "'..'"), ("/etc/passwd", "absolute"), ("C:\\x.txt", "absolute"),
    ("a/b/c/d/e/f/g/h.txt", "deeper"), ("", "no file name"),
])
def test_store_safe_parts_refuses(name, reason):
    with pytest.raises(HingewordError, match=reason):
        store.safe_parts(name)


def test_store_save_term_checks_names_and_date(tmp_path):
    with pytest.raises(HingewordError, match="a date like 2026-09-07"):
        store.save_term(tmp_path, "c", "t", "12/01/2026")
    with pytest.raises(HingewordError, match="give the class a name"):
        store.save_term(tmp_path, "  ", "t", "2026-01-12")
    with pytest.raises(HingewordError, match="control characters"):
        store.save_term(tmp_path, "c\x1b[31m", "t", "2026-01-12")
    t = store.save_term(tmp_path, " 10B ", "autumn", "2026-09-07")
    assert (t.class_name, t.term, t.term_start) == ("10B", "autumn", "2026-09-07")
    assert store.find_term(tmp_path, "10B", "autumn") == t


def test_store_files_and_zip_with_bad_members(term, monkeypatch):
    monkeypatch.setattr(store, "MAX_FILE_BYTES", 1000)
    big_but_small_in_zip = b"a " * 600  # 1,200 bytes unpacked: over the limit
    data = make_zip({"essays/carla.txt": "We discussed about our trip.", "essays/../../evil.txt": "x",
                     "essays/inner.zip": "PK", "essays/big.txt": big_but_small_in_zip},
                    links={"essays/link.txt": "/etc/passwd"})
    report = store.save_uploads(term, [up("anna.txt", "I listen music."), up("class.zip", data),
                                       up("huge.txt", "x" * 2000)])
    assert sorted(report.stored) == ["anna.txt", "carla.txt"]
    reasons = {s.source: s.reason for s in report.skipped}
    assert reasons["class.zip: essays/../../evil.txt"] == "path leads out of its folder ('..'); not stored"
    assert reasons["class.zip: essays/link.txt"] == "symbolic link inside the zip; not unpacked"
    assert reasons["class.zip: essays/inner.zip"].startswith("a zip inside the zip")
    assert reasons["class.zip: essays/big.txt"].startswith("larger than the 1 kB limit")
    assert reasons["huge.txt"].startswith("larger than the 1 kB limit")
    assert tree(term) == ["anna.txt", "carla.txt"]
    assert not (term.path.parent.parent.parent / "evil.txt").exists()
    assert [s.source for s in term.last_upload()] == [s.source for s in report.skipped]


def test_store_zip_understating_its_size_is_cut(term, monkeypatch):
    """A zip entry whose header claims a small size but unpacks to more is read only up to the limit."""
    monkeypatch.setattr(store, "MAX_FILE_BYTES", 1000)
    data = bytearray(make_zip({"bomb.txt": "a" * 50_000}))
    # rewrite the declared uncompressed size (local header and central directory) to 10 bytes
    at = data.index(b"PK\x03\x04")
    data[at + 22:at + 26] = (10).to_bytes(4, "little")
    cd = data.index(b"PK\x01\x02")
    data[cd + 24:cd + 28] = (10).to_bytes(4, "little")
    report = store.save_uploads(term, [up("b.zip", bytes(data))])
    assert report.stored == []
    assert len(report.skipped) == 1 and report.skipped[0].source == "b.zip: bomb.txt"
    assert tree(term) == []


def test_store_zip_bounds_entries_and_total(term, monkeypatch):
    monkeypatch.setattr(store, "MAX_ZIP_ENTRIES", 3)
    report = store.save_uploads(term, [up("many.zip", make_zip({f"e{i}.txt": "text" for i in range(4)}))])
    assert report.stored == [] and "more than the 3 allowed; nothing was taken" in report.skipped[0].reason
    monkeypatch.setattr(store, "MAX_ZIP_ENTRIES", 100)
    monkeypatch.setattr(store, "MAX_ZIP_BYTES", 250)
    report = store.save_uploads(term, [up("total.zip", make_zip({f"e{i}.txt": "w" * 100 for i in range(5)}))])
    assert report.stored == ["e0.txt", "e1.txt"]
    assert "unpacks to more than" in report.skipped[-1].reason


def test_store_not_a_zip(term):
    report = store.save_uploads(term, [up("class.zip", b"not a zip at all")])
    assert report.skipped[0].reason == "not a readable zip file; nothing was taken from it"


def test_store_folder_upload_drops_chosen_folder_and_takes_manifest(term):
    files = [up("autumn/manifest.csv", "file,writer,l1\nanna.txt,Anna K,pl\n"),
             up("autumn/anna.txt", "We discussed about it."), up("autumn/ben/essay.txt", "I listen music.")]
    report = store.save_uploads(term, folder_files=files)
    assert sorted(report.stored) == ["anna.txt", "ben/essay.txt"]
    assert report.manifest == "autumn/manifest.csv"
    assert term.manifest is not None and "Anna K" in term.manifest.read_text()


def test_store_separate_manifest_wins(term):
    report = store.save_uploads(term, [up("manifest.csv", "file,writer\n")],
                                manifest=up("names.csv", "file,writer\nanna.txt,Anna\n"))
    assert report.manifest == "names.csv"
    assert report.skipped[0].reason == "a second manifest; the one uploaded separately is used"
    bad = store.save_uploads(term, manifest=up("names.xlsx", b"PK"))
    assert bad.manifest is None and "must be a .csv file" in bad.skipped[0].reason


def test_store_same_safe_name_twice_in_one_upload(term):
    report = store.save_uploads(term, [up("a?.txt", "one"), up("a*.txt", "two")])
    assert report.stored == ["a_.txt", "a_ (2).txt"]
    again = store.save_uploads(term, [up("a?.txt", "three")])  # a later upload replaces
    assert again.stored == ["a_.txt"] and (term.essays / "a_.txt").read_text() == "three"


def test_store_clear_and_remove(tmp_path, term):
    store.save_uploads(term, [up("anna.txt", "text")], manifest=up("m.csv", "file,writer\n"))
    other = store.save_term(tmp_path / "ws", "evening-b1", "2026-summer", "2026-04-20")
    store.save_uploads(other, [up("ben.txt", "text")])
    assert store.clear_files(term) == 2 and tree(term) == [] and term.manifest is None
    assert store.find_term(tmp_path / "ws", "evening-b1", "2026-spring") is not None  # the term stays
    assert store.remove(tmp_path / "ws", "evening-b1", "2026-spring") == 0
    assert store.remove(tmp_path / "ws", "evening-b1", "2026-summer") == 1
    assert not store.exists(tmp_path / "ws", "evening-b1")  # its last term gone: the class folder too
    assert json.loads(json.dumps([t.term for t in store.terms(tmp_path / "ws")])) == []


def test_store_labels_strip_control_characters():
    assert store.label("a\x1b[31mb.txt") == "a [31mb.txt"
    assert len(store.label("x" * 500)) == 158
