"""History stage: the SQLite workspace (runs, essays, attachments, pattern figures).

Only this module touches SQLite. The schema is a list of named migrations; the
database records how many are applied in ``PRAGMA user_version``. Opening an
older workspace writes a backup copy, then applies the missing migrations in one
transaction; opening a newer one is refused.

Every scan replaces its (class, term) run inside one ``BEGIN IMMEDIATE``
transaction, so a scan killed half-way leaves the previous run intact.

Safety rules (issue 15):

* A new database is built complete under a temporary name and linked into place, so
  ``hingeword.sqlite`` is either absent or a whole workspace; several processes may
  create the same workspace at once (one wins, the others open it). Migrations run
  under the write lock and re-read the schema version there.
* A file that is not a hingeword database (0 bytes, garbage, truncated, another
  program's database) is never written to or replaced: opening it is a one-line
  :class:`~hingeword.errors.WorkspaceError` that names the file, the backup and what to do.
* ``read_only=True`` (report, export, trends, concordance) opens the database with
  SQLite's ``mode=ro`` (``immutable=1`` on a read-only file system), so reading never
  writes; only an older schema needs writing, and on a read-only workspace that is
  a clear message instead.
* A second writer waits for the first (SQLite's busy timeout, :data:`BUSY_TIMEOUT`
  seconds) and then gets "workspace busy"; a full disk, a read-only folder and a
  damaged file are one-line errors too (:func:`_explain`), never tracebacks.
* After each stored run the database is copied to ``hingeword.sqlite.bak`` (SQLite's
  online backup, written under a temporary name and renamed).
"""

from __future__ import annotations

import contextlib
import datetime as _dt
import functools
import json
import logging
import operator
import os
import secrets
import sqlite3
import urllib.parse
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, fields
from pathlib import Path

from .errors import WorkspaceError
from .extract import Attachment
from .ingest import Essay, Skipped
from .record import Decision, PatternRecord

log = logging.getLogger("hingeword")

DB_NAME = "hingeword.sqlite"
#: The copy of the database made after each stored run.
BACKUP_NAME = DB_NAME + ".bak"
#: Seconds a writer waits for another process's write to finish before "workspace busy".
BUSY_TIMEOUT = 30.0
_SQLITE_HEADER = b"SQLite format 3\x00"

MIGRATIONS: list[tuple[str, str]] = [
    (
        "0001_foundation",
        """
        CREATE TABLE runs (
            id INTEGER PRIMARY KEY,
            class TEXT NOT NULL,
            term TEXT NOT NULL,
            created TEXT NOT NULL,
            tool_version TEXT NOT NULL,
            model TEXT NOT NULL,
            model_version TEXT NOT NULL,
            extractor_version TEXT NOT NULL,
            source TEXT NOT NULL,
            essays_read INTEGER NOT NULL,
            essays_skipped INTEGER NOT NULL,
            words INTEGER NOT NULL,
            settings TEXT NOT NULL DEFAULT '{}',
            reference TEXT NOT NULL DEFAULT '{}',
            UNIQUE (class, term)
        );
        CREATE TABLE skipped (
            run_id INTEGER NOT NULL REFERENCES runs(id) ON DELETE CASCADE,
            source TEXT NOT NULL,
            reason TEXT NOT NULL
        );
        CREATE TABLE notes (
            run_id INTEGER NOT NULL REFERENCES runs(id) ON DELETE CASCADE,
            kind TEXT NOT NULL,
            message TEXT NOT NULL
        );
        CREATE TABLE essays (
            run_id INTEGER NOT NULL REFERENCES runs(id) ON DELETE CASCADE,
            essay_id TEXT NOT NULL,
            writer TEXT NOT NULL,
            sha256 TEXT NOT NULL,
            source TEXT NOT NULL,
            encoding TEXT NOT NULL,
            l1 TEXT, level TEXT, task TEXT,
            meta TEXT NOT NULL DEFAULT '{}',
            words INTEGER NOT NULL,
            text TEXT NOT NULL,
            PRIMARY KEY (run_id, essay_id)
        );
        CREATE TABLE attachments (
            run_id INTEGER NOT NULL REFERENCES runs(id) ON DELETE CASCADE,
            essay_id TEXT NOT NULL,
            writer TEXT NOT NULL,
            governor TEXT NOT NULL,
            governor_pos TEXT NOT NULL,
            governor_text TEXT NOT NULL,
            preposition TEXT NOT NULL,
            relation TEXT NOT NULL,
            sentence TEXT NOT NULL,
            sentence_start INTEGER NOT NULL,
            gov_start INTEGER NOT NULL,
            gov_end INTEGER NOT NULL,
            prep_start INTEGER NOT NULL,
            prep_end INTEGER NOT NULL,
            original_governor TEXT NOT NULL DEFAULT ''
        );
        CREATE INDEX attachments_key ON attachments (run_id, governor, governor_pos, preposition);
        CREATE TABLE pattern_stats (
            run_id INTEGER NOT NULL REFERENCES runs(id) ON DELETE CASCADE,
            governor TEXT NOT NULL,
            governor_pos TEXT NOT NULL,
            preposition TEXT NOT NULL,
            figures TEXT NOT NULL,
            PRIMARY KEY (run_id, governor, governor_pos, preposition)
        );
        """,
    ),
    (
        "0002_terms_links_decisions",
        """
        ALTER TABLE runs ADD COLUMN term_start TEXT;
        UPDATE runs SET term_start = COALESCE(json_extract(settings, '$.term_start'), substr(created, 1, 10));
        CREATE TABLE class_links (
            old TEXT NOT NULL,
            new TEXT NOT NULL,
            created TEXT NOT NULL,
            PRIMARY KEY (old, new)
        );
        CREATE TABLE decisions (
            scope TEXT NOT NULL,
            governor TEXT NOT NULL,
            preposition TEXT NOT NULL,
            reason TEXT NOT NULL,
            decided_on TEXT NOT NULL,
            PRIMARY KEY (scope, governor, preposition)
        );
        CREATE TABLE decision_log (
            scope TEXT NOT NULL,
            governor TEXT NOT NULL,
            preposition TEXT NOT NULL,
            action TEXT NOT NULL,
            reason TEXT NOT NULL,
            decided_on TEXT NOT NULL
        );
        """,
    ),
    (
        "0003_object_class",
        """
        ALTER TABLE attachments ADD COLUMN object_class TEXT NOT NULL DEFAULT '';
        """,
    ),
]

#: scope of a decision that applies to every class
ALL_CLASSES = "*"


def schema_version() -> int:
    return len(MIGRATIONS)


@dataclass(frozen=True)
class RunInfo:
    """One stored run: what was scanned, with what, and the settings used."""

    id: int
    class_name: str
    term: str
    term_start: str
    created: str
    tool_version: str
    model: str
    model_version: str
    extractor_version: str
    source: str
    essays_read: int
    essays_skipped: int
    words: int
    settings: dict
    reference: dict

    @classmethod
    def from_row(cls, row: sqlite3.Row) -> RunInfo:
        return cls(id=row["id"], class_name=row["class"], term=row["term"],
                   term_start=row["term_start"] or row["created"][:10], created=row["created"],
                   tool_version=row["tool_version"], model=row["model"], model_version=row["model_version"],
                   extractor_version=row["extractor_version"], source=row["source"], essays_read=row["essays_read"],
                   essays_skipped=row["essays_skipped"], words=row["words"], settings=_json_dict(row["settings"]),
                   reference=_json_dict(row["reference"]))


@dataclass(frozen=True)
class Note:
    """A remark stored with a run (duplicates, spelling groups, rule problems…)."""

    kind: str
    message: str


@dataclass(frozen=True)
class Forgotten:
    """What :meth:`Workspace.forget` deleted."""

    runs: tuple[RunInfo, ...]
    essays: int
    decisions: int
    links: int
    unused_texts: frozenset[str]  # sha256 of essay texts that no stored run holds any more


def _json_dict(text) -> dict:
    try:
        value = json.loads(text or "{}")
    except (TypeError, ValueError):
        return {}
    return value if isinstance(value, dict) else {}


def _now() -> str:
    return _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat()


def _explain(exc: sqlite3.Error, db_path: Path) -> WorkspaceError | None:
    """A one-line :class:`WorkspaceError` for a database fault the user can act on, else ``None``.

    Keyed on SQLite's primary result code (``sqlite_errorname``, Python 3.11+): busy or
    locked, read-only, full, I/O error, cannot open, corrupt, not a database.
    """
    name = (getattr(exc, "sqlite_errorname", None) or "").split("_")
    code = "_".join(name[:2]) if len(name) >= 2 else ""
    text = str(exc)
    if code in ("SQLITE_BUSY", "SQLITE_LOCKED") or "database is locked" in text:
        return WorkspaceError(f"workspace busy: another hingeword command is writing to {db_path}; "
                              "try again when it has finished")
    if code == "SQLITE_READONLY" or "readonly database" in text:
        return WorkspaceError(f"workspace {db_path} is read-only: this command needs to write to it; make the "
                              "folder writable or copy the workspace to a writable place (nothing was changed)")
    if code == "SQLITE_FULL" or "disk is full" in text:
        return WorkspaceError(f"cannot write {db_path}: the disk is full; nothing was changed "
                              "(free some space and run the command again)")
    if code == "SQLITE_IOERR":
        return WorkspaceError(f"cannot read or write {db_path}: disk I/O error ({text}); nothing was changed "
                              "(check the disk: full, removed or failing)")
    if code == "SQLITE_CANTOPEN" and db_path.exists() and not os.access(db_path.parent, os.W_OK):
        return WorkspaceError(f"workspace {db_path} is on a read-only folder or disk: this command needs to write "
                              "to it; make it writable or copy the workspace to a writable place (nothing was changed)")
    if code == "SQLITE_CANTOPEN":
        return WorkspaceError(f"cannot open {db_path} ({text}): check that the folder exists and can be read")
    if code in ("SQLITE_CORRUPT", "SQLITE_NOTADB") or "malformed" in text or "not a database" in text:
        return damaged(db_path, text)
    return None


def damaged(db_path: Path, what: str) -> WorkspaceError:
    """The error for a database file that cannot be used, naming the backups and what to do."""
    backups = sorted(db_path.parent.glob(DB_NAME + "*.bak"), key=lambda p: (p.name != BACKUP_NAME, p.name))
    if backups:
        advice = (f"restore the backup {backups[0]} (copy it to {db_path.name} after moving the damaged file "
                  "away), or move the damaged file away to start a new workspace")
    else:
        advice = "no backup found: move the file away to start a new workspace (your essay files are not affected)"
    return WorkspaceError(f"workspace database {db_path} is damaged or not a hingeword database ({what}); "
                          f"it was left untouched; {advice}")


def _translated(fn: Callable) -> Callable:
    """Turn database faults the user can act on into one-line :class:`WorkspaceError`\\ s."""

    @functools.wraps(fn)
    def wrapper(self, *args, **kwargs):
        try:
            return fn(self, *args, **kwargs)
        except sqlite3.Error as exc:
            explained = _explain(exc, self.db_path)
            if explained is None:
                raise
            raise explained from exc

    return wrapper


class Workspace:
    """A workspace folder: ``hingeword.sqlite``, ``cache/`` (parses), ``references/``, reports.

    It stores runs and returns them as records (:class:`RunInfo`, :class:`~hingeword.ingest.Essay`,
    :class:`~hingeword.extract.Attachment`, :class:`~hingeword.record.PatternRecord`); what
    they mean across terms is the trends stage's business.

    :param create: make the folder and a new database when they do not exist.
    :param read_only: open the database without writing to it (commands that only read).
    """

    def __init__(self, root: str | Path, *, create: bool = True, read_only: bool = False):
        self.root = Path(root)
        self.db_path = self.root / DB_NAME
        self.read_only = read_only
        create = create and not read_only
        if not self.root.exists():
            if not create:
                raise WorkspaceError(f"no workspace at {Path(self.root).absolute()} (run 'hingeword scan' first, or "
                                     "give the workspace folder with --workspace)")
            try:
                self.root.mkdir(parents=True, exist_ok=True)  # another process may make it too
            except OSError as exc:
                raise WorkspaceError(f"cannot create the workspace folder {self.root}: {exc.strerror or exc}") from None
        if not self.db_path.exists() and not self.db_path.is_symlink():
            if not create:
                raise WorkspaceError(f"no hingeword database in {self.root} (run 'hingeword scan' first)")
            self._create_database()
        self._check_file()
        self.conn = self._connect()
        try:
            self._migrate()
            if not read_only:
                self.conn.execute("PRAGMA journal_mode = WAL")
        except BaseException as exc:
            self.conn.close()
            explained = _explain(exc, self.db_path) if isinstance(exc, sqlite3.Error) else None
            if explained is not None:
                raise explained from exc
            raise

    @property
    def cache_dir(self) -> Path:
        return self.root / "cache"

    def close(self) -> None:
        self.conn.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    # ---------------------------------------------------------------- opening
    def _check_file(self) -> None:
        """Refuse a file that is not an SQLite database before SQLite touches it."""
        try:
            size = self.db_path.stat().st_size
            with open(self.db_path, "rb") as fh:
                head = fh.read(len(_SQLITE_HEADER))
        except OSError as exc:
            raise WorkspaceError(f"cannot read {self.db_path}: {exc.strerror or exc}") from None
        if size == 0:
            raise damaged(self.db_path, "the file is empty, 0 bytes")
        if head != _SQLITE_HEADER:
            raise damaged(self.db_path, "no SQLite header")

    def _connect(self) -> sqlite3.Connection:
        """A connection: read-write, or ``mode=ro`` (``immutable=1`` where not even the
        shared-memory file of WAL mode can be created, i.e. a read-only file system)."""
        try:
            if not self.read_only:
                conn = sqlite3.connect(self.db_path, isolation_level=None, timeout=BUSY_TIMEOUT)
                conn.execute("PRAGMA user_version").fetchone()
            else:
                uri = "file:" + urllib.parse.quote(str(self.db_path.resolve()))
                try:
                    conn = sqlite3.connect(uri + "?mode=ro", uri=True, isolation_level=None, timeout=BUSY_TIMEOUT)
                    conn.execute("PRAGMA user_version").fetchone()
                except sqlite3.OperationalError as exc:
                    # WAL mode needs a shared-memory file beside the database; on a read-only
                    # folder or disk it cannot be made (CANTOPEN, READONLY_DIRECTORY): nobody
                    # can write there either, so the file is read as immutable.
                    # Also a full disk (IOERR). Immutable reading ignores a write-ahead log, so
                    # it is used only when there is none with content.
                    code = "_".join((getattr(exc, "sqlite_errorname", None) or "").split("_")[:2])
                    wal = self.db_path.with_name(DB_NAME + "-wal")
                    if code not in ("SQLITE_CANTOPEN", "SQLITE_READONLY", "SQLITE_IOERR") or \
                            (wal.exists() and wal.stat().st_size > 0):
                        raise
                    conn = sqlite3.connect(uri + "?mode=ro&immutable=1", uri=True, isolation_level=None)
                    conn.execute("PRAGMA user_version").fetchone()
        except sqlite3.Error as exc:
            explained = _explain(exc, self.db_path)
            if explained is None:
                raise
            raise explained from exc
        conn.row_factory = sqlite3.Row
        conn.execute("PRAGMA foreign_keys = ON")
        return conn

    def _create_database(self) -> None:
        """Build a complete new database under a temporary name, then link it into place.

        ``os.link`` fails when the name exists, so a database another process created
        meanwhile is kept and opened instead; the temporary files are always removed.
        """
        tmp = self.db_path.with_name(f".{DB_NAME}.{os.getpid()}.{secrets.token_hex(4)}.new")
        try:
            conn = sqlite3.connect(tmp, isolation_level=None)
            try:
                conn.execute("PRAGMA journal_mode = WAL")
                conn.execute("BEGIN IMMEDIATE")
                for _name, sql in MIGRATIONS:
                    for stmt in _statements(sql):
                        conn.execute(stmt)
                conn.execute(f"PRAGMA user_version = {schema_version()}")
                conn.execute("COMMIT")
            finally:
                conn.close()
            try:
                os.link(tmp, self.db_path)
            except FileExistsError:
                log.debug("workspace database %s was created by another process", self.db_path)
            except OSError:  # a file system without hard links: rename, unless one appeared meanwhile
                if not self.db_path.exists():
                    os.replace(tmp, self.db_path)
        except sqlite3.Error as exc:
            explained = _explain(exc, self.db_path)
            if explained is None:
                raise
            raise explained from exc
        except OSError as exc:
            raise WorkspaceError(f"cannot create {self.db_path}: {exc.strerror or exc}") from None
        finally:
            for suffix in ("", "-wal", "-shm", "-journal"):
                with contextlib.suppress(OSError):
                    os.unlink(f"{tmp}{suffix}")

    # ---------------------------------------------------------------- schema
    @_translated
    def version(self) -> int:
        return self.conn.execute("PRAGMA user_version").fetchone()[0]

    def _check_not_newer(self, current: int) -> None:
        target = schema_version()
        if current > target:
            raise WorkspaceError(
                f"workspace {self.root} has schema version {current}, newer than this hingeword "
                f"understands ({target}); upgrade hingeword"
            )
        if current == 0 and self.conn.execute("SELECT COUNT(*) FROM sqlite_master").fetchone()[0]:
            raise damaged(self.db_path, "an SQLite database of another program, with no hingeword schema version")

    def _migrate(self) -> None:
        current = self.version()
        target = schema_version()
        self._check_not_newer(current)
        if current == target:
            return
        if self.read_only:
            self._upgrade_for_reading(current)
            return
        if current > 0:
            self._write_backup(self.db_path.with_name(f"{DB_NAME}.v{current}.bak"))
        # executescript commits implicitly, so run each statement in our own transaction;
        # the version is read again under the write lock: another process may have migrated.
        self.conn.execute("BEGIN IMMEDIATE")
        try:
            current = self.version()
            self._check_not_newer(current)
            for name, sql in MIGRATIONS[current:]:
                for stmt in _statements(sql):
                    self.conn.execute(stmt)
                log.debug("applied migration %s", name)
            self.conn.execute(f"PRAGMA user_version = {target}")
            self.conn.execute("COMMIT")
        except BaseException:
            self.conn.execute("ROLLBACK")
            raise
        if current < target:
            log.info("workspace schema %d -> %d", current, target)

    def _upgrade_for_reading(self, current: int) -> None:
        """An older schema opened for reading: upgrade it once through a writing connection,
        or say clearly that a read-only workspace cannot be upgraded."""
        self.conn.close()
        try:
            Workspace(self.root, create=False).close()
        except WorkspaceError as exc:
            raise WorkspaceError(
                f"workspace {self.root} was written by an older hingeword (schema {current}, this one reads "
                f"{schema_version()}) and cannot be upgraded: {exc}"
            ) from None
        finally:
            self.conn = self._connect()

    def _write_backup(self, target: Path) -> None:
        """Copy the database with SQLite's online backup to ``target`` (temporary name, renamed)."""
        from .files import atomic_path

        with atomic_path(target) as tmp:
            dest = sqlite3.connect(tmp)
            try:
                self.conn.backup(dest)
            finally:
                dest.close()
        log.info("workspace backup written to %s", target)

    def backup(self) -> Path | None:
        """Copy the database to ``hingeword.sqlite.bak``; a failure (full disk) only logs a warning."""
        from .errors import HingewordError

        target = self.db_path.with_name(BACKUP_NAME)
        try:
            self._write_backup(target)
        except (HingewordError, sqlite3.Error) as exc:
            log.warning("workspace backup %s not written: %s", target, exc)
            return None
        return target

    def _tx(self):
        ws = self

        class _Tx:
            def __enter__(self_):
                ws.conn.execute("BEGIN IMMEDIATE")

            def __exit__(self_, exc_type, *rest):
                if exc_type is None:
                    try:
                        ws.conn.execute("COMMIT")
                        return False
                    except BaseException:
                        if ws.conn.in_transaction:
                            ws.conn.execute("ROLLBACK")
                        raise
                if ws.conn.in_transaction:
                    ws.conn.execute("ROLLBACK")
                return False

        return _Tx()

    # ------------------------------------------------------------------ runs
    @_translated
    def replace_run(
        self,
        *,
        class_name: str,
        term: str,
        run_meta: dict,
        essays: Sequence[Essay],
        skipped: Sequence[Skipped],
        notes: Sequence[tuple[str, str]],
        attachments: Iterable[Attachment],
        records: Sequence[PatternRecord] = (),
    ) -> int:
        """Replace the run of ``class_name``/``term`` atomically; return the new run id.

        A run with no essays is refused: it would silently replace a stored run with nothing.
        """
        if not essays:
            raise WorkspaceError(f"refusing to store a run of {class_name} / {term} with no essays; the earlier run is kept")
        c = self.conn
        with self._tx():
            c.execute("DELETE FROM runs WHERE class = ? AND term = ?", (class_name, term))
            cols = ("class", "term", "created", "tool_version", "model", "model_version", "extractor_version",
                    "source", "essays_read", "essays_skipped", "words", "settings", "reference", "term_start")
            row = {"class": class_name, "term": term, "created": run_meta.get("created") or _now(),
                   "essays_read": len(essays), "essays_skipped": len(skipped), **run_meta}
            row["term_start"] = row.get("settings", {}).get("term_start") or row["created"][:10]
            row["settings"] = json.dumps(row.get("settings", {}), sort_keys=True)
            row["reference"] = json.dumps(row.get("reference", {}), sort_keys=True)
            cur = c.execute(
                f"INSERT INTO runs ({', '.join(cols)}) VALUES ({', '.join('?' * len(cols))})",
                [row[k] for k in cols],
            )
            run_id = cur.lastrowid
            c.executemany("INSERT INTO skipped VALUES (?, ?, ?)", [(run_id, s.source, s.reason) for s in skipped])
            c.executemany("INSERT INTO notes VALUES (?, ?, ?)", [(run_id, k, m) for k, m in notes])
            c.executemany(
                "INSERT INTO essays VALUES (?,?,?,?,?,?,?,?,?,?,?,?)",
                ((run_id, e.essay_id, e.writer, e.sha256, e.source, e.encoding, e.l1, e.level, e.task,
                  json.dumps(dict(e.meta), sort_keys=True), e.word_count, e.text) for e in essays),
            )
            names = [f.name for f in fields(Attachment)]
            values = operator.attrgetter(*names)
            c.executemany(
                f"INSERT INTO attachments (run_id, {', '.join(names)}) VALUES ({', '.join('?' * (len(names) + 1))})",
                ((run_id, *values(a)) for a in attachments),  # streamed: no second copy of every row
            )
            self._insert_records(run_id, records)
        self.backup()
        return run_id

    def _insert_records(self, run_id: int, records: Sequence[PatternRecord]) -> None:
        self.conn.executemany(
            "INSERT INTO pattern_stats VALUES (?, ?, ?, ?, ?)",
            [(run_id, *r.key, json.dumps(_stored_row(r), sort_keys=True)) for r in records],
        )

    @_translated
    def run(self, class_name: str, term: str) -> RunInfo:
        row = self.conn.execute("SELECT * FROM runs WHERE class = ? AND term = ?", (class_name, term)).fetchone()
        if row is None:
            known = self.conn.execute("SELECT class, term FROM runs ORDER BY class, term").fetchall()
            listing = ", ".join(f"{r['class']}/{r['term']}" for r in known) or "none yet"
            raise WorkspaceError(f"no scan of class '{class_name}', term '{term}' in {self.root} (known: {listing})")
        return RunInfo.from_row(row)

    @_translated
    def find_run(self, class_name: str, term: str) -> RunInfo | None:
        """The run of a class and term, or ``None`` when there is none yet."""
        row = self.conn.execute("SELECT * FROM runs WHERE class = ? AND term = ?", (class_name, term)).fetchone()
        return RunInfo.from_row(row) if row is not None else None

    @_translated
    def runs(self, class_name: str | None = None) -> list[RunInfo]:
        if class_name is None:
            rows = self.conn.execute("SELECT * FROM runs ORDER BY class, created").fetchall()
        else:
            rows = self.conn.execute("SELECT * FROM runs WHERE class = ? ORDER BY created", (class_name,)).fetchall()
        return [RunInfo.from_row(r) for r in rows]

    @_translated
    def runs_in_order(self, class_name: str) -> list[RunInfo]:
        """The runs of a class and of every class linked to it, in term order.

        Order key: the term's start date (``--term-start``), then creation time.
        """
        group = sorted(self.class_group(class_name))
        marks = ", ".join("?" * len(group))
        rows = self.conn.execute(
            f"SELECT * FROM runs WHERE class IN ({marks}) ORDER BY term_start, created, term", group
        ).fetchall()
        return [RunInfo.from_row(r) for r in rows]

    @_translated
    def previous_run(self, class_name: str, term: str) -> RunInfo | None:
        """The run before this one in the class's term order (linked classes included)."""
        run = self.run(class_name, term)
        order = [r.id for r in self.runs_in_order(class_name)]
        if run.id not in order or order.index(run.id) == 0:
            return None
        prev = order[order.index(run.id) - 1]
        return next(r for r in self.runs_in_order(class_name) if r.id == prev)

    @_translated
    def essays(self, run_id: int) -> list[Essay]:
        rows = self.conn.execute("SELECT * FROM essays WHERE run_id = ? ORDER BY essay_id", (run_id,)).fetchall()
        return [Essay(essay_id=r["essay_id"], writer=r["writer"], text=r["text"], sha256=r["sha256"],
                      source=r["source"], encoding=r["encoding"], l1=r["l1"], level=r["level"], task=r["task"],
                      meta=tuple(sorted(_json_dict(r["meta"]).items()))) for r in rows]

    @_translated
    def writers(self, run_id: int) -> list[str]:
        """The run's writer ids, sorted."""
        return [r[0] for r in self.conn.execute(
            "SELECT DISTINCT writer FROM essays WHERE run_id = ? ORDER BY writer", (run_id,))]

    @_translated
    def skipped(self, run_id: int) -> list[Skipped]:
        return [Skipped(source=r["source"], reason=r["reason"]) for r in self.conn.execute(
            "SELECT * FROM skipped WHERE run_id = ? ORDER BY source", (run_id,))]

    @_translated
    def notes(self, run_id: int) -> list[Note]:
        return [Note(kind=r["kind"], message=r["message"]) for r in self.conn.execute(
            "SELECT * FROM notes WHERE run_id = ? ORDER BY rowid", (run_id,))]

    @_translated
    def attachments(self, run_id: int, key: tuple[str, str | None, str] | None = None) -> list[Attachment]:
        """A run's attachments in essay order; ``key`` = (governor, POS or None, preposition) selects one pattern."""
        names = [f.name for f in fields(Attachment)]
        where, args = "run_id = ?", [run_id]
        if key is not None:
            governor, pos, prep = key
            where += " AND governor = ? AND preposition = ?"
            args += [governor, prep]
            if pos is not None:
                where += " AND governor_pos = ?"
                args.append(pos)
        rows = self.conn.execute(
            f"SELECT {', '.join(names)} FROM attachments WHERE {where} "
            "ORDER BY essay_id, gov_start, prep_start, preposition", args,
        ).fetchall()
        return [Attachment(*r) for r in rows]  # columns in field order

    @_translated
    def pattern_counts(self, run_ids: Sequence[int]) -> list[tuple[int, str, str, str, str, str, int]]:
        """Uses per (run, class, writer, governor, POS, preposition) over the given runs (for pooled evidence)."""
        if not run_ids:
            return []
        marks = ", ".join("?" * len(run_ids))
        return [tuple(r) for r in self.conn.execute(
            f"SELECT a.run_id, r.class, a.writer, a.governor, a.governor_pos, a.preposition, COUNT(*) FROM attachments a "
            f"JOIN runs r ON r.id = a.run_id WHERE a.run_id IN ({marks}) "
            "GROUP BY a.run_id, r.class, a.writer, a.governor, a.governor_pos, a.preposition", list(run_ids))]

    @_translated
    def records(self, run_id: int) -> list[PatternRecord]:
        """The run's scored patterns as stored (without decisions or comparison)."""
        rows = self.conn.execute(
            "SELECT figures FROM pattern_stats WHERE run_id = ? ORDER BY governor, governor_pos, preposition", (run_id,)
        ).fetchall()
        return [PatternRecord.from_row(json.loads(r[0])) for r in rows]

    @_translated
    def writer_codes(self, class_name: str, same_as: dict[str, str] | None = None) -> dict[str, str]:
        """Stable pseudonyms for a class: "S01", "S02", … in order of first appearance.

        Runs are taken in term order, writers within a run alphabetically, so the
        codes of earlier terms never change when a later term is added.

        :param same_as: writer id -> the id of the same student in an earlier term (links the
            teacher confirmed, :mod:`hingeword.writer_links`): that writer keeps the earlier code.
        """
        codes: dict[str, str] = {}
        same_as = same_as or {}
        count = 0
        for run in self.runs_in_order(class_name):
            for writer in self.writers(run.id):
                if writer in codes:
                    continue
                if same_as.get(writer) in codes:
                    codes[writer] = codes[same_as[writer]]
                else:
                    count += 1
                    codes[writer] = f"S{count:02d}"
        return codes

    def forget(self, class_name: str, term: str | None = None) -> Forgotten:
        """Delete the runs of a class (or its one ``term``) in one transaction: essays, instances,
        figures, skipped files and notes. Deleting the whole class also deletes the decisions made
        for it, their log and its links to other classes (linked classes keep their own runs).

        Deleted rows are overwritten in the database file (``PRAGMA secure_delete``) and the
        write-ahead log is truncated afterwards, so the essays do not linger on disk.
        Nothing stored is not an error: the result says what was deleted.
        """
        c = self.conn
        c.execute("PRAGMA secure_delete = ON")
        with self._tx():
            if term is None:
                rows = c.execute("SELECT * FROM runs WHERE class = ?", (class_name,)).fetchall()
            else:
                rows = c.execute("SELECT * FROM runs WHERE class = ? AND term = ?", (class_name, term)).fetchall()
            runs = tuple(RunInfo.from_row(r) for r in rows)
            ids = [r.id for r in runs]
            marks = ", ".join("?" * len(ids))
            hashes: set[str] = set()
            essays = 0
            if ids:
                found = c.execute(f"SELECT sha256 FROM essays WHERE run_id IN ({marks})", ids).fetchall()
                essays = len(found)
                hashes = {r[0] for r in found}
                c.execute(f"DELETE FROM runs WHERE id IN ({marks})", ids)  # the rest cascades
            decisions = links = 0
            if term is None:
                decisions = c.execute("DELETE FROM decisions WHERE scope = ?", (class_name,)).rowcount
                c.execute("DELETE FROM decision_log WHERE scope = ?", (class_name,))
                links = c.execute("DELETE FROM class_links WHERE old = ? OR new = ?", (class_name, class_name)).rowcount
            still = set()
            if hashes:
                listed = sorted(hashes)
                still = {r[0] for r in c.execute(
                    f"SELECT DISTINCT sha256 FROM essays WHERE sha256 IN ({', '.join('?' * len(listed))})", listed)}
        c.execute("PRAGMA wal_checkpoint(TRUNCATE)")
        return Forgotten(runs=runs, essays=essays, decisions=decisions, links=links,
                         unused_texts=frozenset(hashes - still))

    # ----------------------------------------------------------- class links
    @_translated
    def link_classes(self, old: str, new: str) -> None:
        """Record that class ``new`` continues class ``old`` (same group of students)."""
        if old == new:
            raise WorkspaceError("a class cannot be linked to itself")
        with self._tx():
            self.conn.execute("INSERT OR IGNORE INTO class_links VALUES (?, ?, ?)", (old, new, _now()))

    @_translated
    def class_group(self, class_name: str) -> set[str]:
        """The class and all classes linked to it, directly or through others."""
        links = self.conn.execute("SELECT old, new FROM class_links").fetchall()
        group, changed = {class_name}, True
        while changed:
            changed = False
            for old, new in links:
                if (old in group) != (new in group):
                    group |= {old, new}
                    changed = True
        return group

    @_translated
    def canonical_class(self, class_name: str) -> str:
        """The class's name as stored: ``class_name`` itself when a run has it, else the one stored
        name that differs only in case ("Evening-B2" → "evening-b2"), else ``class_name``."""
        if class_name is None:
            return class_name
        names = {r[0] for r in self.conn.execute("SELECT DISTINCT class FROM runs")}
        if class_name in names:
            return class_name
        same = [n for n in names if n.casefold() == class_name.casefold()]
        return same[0] if len(same) == 1 else class_name

    def require_class(self, class_name: str) -> None:
        """Raise a clear error when no run of the class (or of a class linked to it) exists."""
        if not self.runs_in_order(class_name):
            known = sorted({r.class_name for r in self.runs()})
            raise WorkspaceError(f"no scans of class '{class_name}' in {self.root} (known: {', '.join(known) or 'none yet'})")

    # -------------------------------------------------------------- decisions
    @_translated
    def dismiss(self, governor: str, preposition: str, *, class_name: str | None, reason: str, on: str | None = None) -> None:
        """Dismiss a pattern for one class (or all classes: ``class_name=None``); persists across terms."""
        scope = class_name or ALL_CLASSES
        day = on or _dt.date.today().isoformat()
        with self._tx():
            self.conn.execute("INSERT OR REPLACE INTO decisions VALUES (?, ?, ?, ?, ?)",
                              (scope, governor.lower(), preposition.lower(), reason, day))
            self.conn.execute("INSERT INTO decision_log VALUES (?, ?, ?, 'dismiss', ?, ?)",
                              (scope, governor.lower(), preposition.lower(), reason, day))

    @_translated
    def restore(self, governor: str, preposition: str, *, class_name: str | None, on: str | None = None) -> bool:
        """Undo a dismissal (for a class: also one made under a class linked to it); False when there was none."""
        scopes = sorted(self.class_group(class_name)) if class_name else [ALL_CLASSES]
        day = on or _dt.date.today().isoformat()
        removed = 0
        with self._tx():
            for scope in scopes:
                cur = self.conn.execute("DELETE FROM decisions WHERE scope = ? AND governor = ? AND preposition = ?",
                                        (scope, governor.lower(), preposition.lower()))
                if cur.rowcount:
                    removed += cur.rowcount
                    self.conn.execute("INSERT INTO decision_log VALUES (?, ?, ?, 'restore', '', ?)",
                                      (scope, governor.lower(), preposition.lower(), day))
        return bool(removed)

    @_translated
    def decisions_for(self, class_name: str) -> dict[tuple[str, str], Decision]:
        """Active dismissals that apply to a class (its own, its group's, and all-class ones)."""
        scopes = sorted(self.class_group(class_name)) + [ALL_CLASSES]
        marks = ", ".join("?" * len(scopes))
        rows = self.conn.execute(f"SELECT * FROM decisions WHERE scope IN ({marks}) ORDER BY decided_on", scopes)
        return {(r["governor"], r["preposition"]): Decision(reason=r["reason"], decided_on=r["decided_on"]) for r in rows}

    def decision_scopes(self, class_name: str) -> dict[tuple[str, str], str]:
        """For each active dismissal that applies to a class: the scope it was made for
        (a class of its group, or :data:`ALL_CLASSES`); a class's own decision wins."""
        scopes = [ALL_CLASSES] + sorted(self.class_group(class_name))
        marks = ", ".join("?" * len(scopes))
        rows = self.conn.execute(f"SELECT scope, governor, preposition FROM decisions WHERE scope IN ({marks})", scopes)
        found: dict[tuple[str, str], str] = {}
        for r in sorted(rows, key=lambda r: r["scope"] != ALL_CLASSES):
            found[(r["governor"], r["preposition"])] = r["scope"]
        return found


def per_10k(count: int, words: int) -> float:
    """Instances per 10,000 words (0 when there are no words)."""
    return round(10_000 * count / words, 2) if words else 0.0


_VIEW_ONLY = ("dismissed", "dismissed_reason", "dismissed_on", "since_last_term", "rate", "previous_rate")


def _stored_row(r: PatternRecord) -> dict:
    """What a run stores of a record: everything but the decision and the comparison, made when read."""
    if r.decision is not None or r.comparison is not None:  # a scan's records have neither: no copy
        r = r.with_(decision=None, comparison=None)
    row = r.to_row()
    for k in _VIEW_ONLY:
        row.pop(k)
    return row


def _statements(sql: str) -> list[str]:
    return [s.strip() for s in sql.split(";") if s.strip()]
