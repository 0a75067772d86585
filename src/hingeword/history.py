"""History stage: the SQLite workspace (runs, essays, attachments, pattern figures).

Only this module touches SQLite. The schema is a list of named migrations; the
database records how many are applied in ``PRAGMA user_version``. Opening an
older workspace writes a backup copy, then applies the missing migrations in one
transaction; opening a newer one is refused.

Every scan replaces its (class, term) run inside one ``BEGIN IMMEDIATE``
transaction, so a scan killed half-way leaves the previous run intact.
"""

from __future__ import annotations

import datetime as _dt
import json
import logging
import shutil
import sqlite3
from collections.abc import Iterable, Sequence
from dataclasses import asdict, dataclass, fields
from pathlib import Path

from .errors import WorkspaceError
from .extract import Attachment
from .ingest import Essay, Skipped

log = logging.getLogger("hingeword")

DB_NAME = "hingeword.sqlite"

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
]


def schema_version() -> int:
    return len(MIGRATIONS)


def _now() -> str:
    return _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat()


class Workspace:
    """A workspace folder: ``hingeword.sqlite``, ``cache/`` (parses), ``references/``, reports."""

    def __init__(self, root: str | Path, *, create: bool = True):
        self.root = Path(root)
        if not self.root.exists():
            if not create:
                raise WorkspaceError(f"no workspace at {self.root} (run 'hingeword scan' first)")
            self.root.mkdir(parents=True)
        self.db_path = self.root / DB_NAME
        if not create and not self.db_path.exists():
            raise WorkspaceError(f"no hingeword database in {self.root} (run 'hingeword scan' first)")
        self.conn = sqlite3.connect(self.db_path, isolation_level=None, timeout=30)
        self.conn.row_factory = sqlite3.Row
        self.conn.execute("PRAGMA foreign_keys = ON")
        self.conn.execute("PRAGMA journal_mode = WAL")
        self._migrate()

    @property
    def cache_dir(self) -> Path:
        return self.root / "cache"

    def close(self) -> None:
        self.conn.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    # ---------------------------------------------------------------- schema
    def version(self) -> int:
        return self.conn.execute("PRAGMA user_version").fetchone()[0]

    def _migrate(self) -> None:
        current = self.version()
        target = schema_version()
        if current > target:
            raise WorkspaceError(
                f"workspace {self.root} has schema version {current}, newer than this hingeword "
                f"understands ({target}); upgrade hingeword"
            )
        if current == target:
            return
        if current > 0:
            backup = self.db_path.with_name(f"{DB_NAME}.v{current}.bak")
            self.conn.execute("PRAGMA wal_checkpoint(FULL)")
            shutil.copy2(self.db_path, backup)
            log.info("workspace schema %d -> %d; backup written to %s", current, target, backup)
        # executescript commits implicitly, so run each statement in our own transaction.
        self.conn.execute("BEGIN IMMEDIATE")
        try:
            for name, sql in MIGRATIONS[current:]:
                for stmt in _statements(sql):
                    self.conn.execute(stmt)
                log.debug("applied migration %s", name)
            self.conn.execute(f"PRAGMA user_version = {target}")
            self.conn.execute("COMMIT")
        except BaseException:
            self.conn.execute("ROLLBACK")
            raise

    # ------------------------------------------------------------------ runs
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
        pattern_figures: Sequence[dict] = (),
    ) -> int:
        """Replace the run of ``class_name``/``term`` atomically; return the new run id."""
        c = self.conn
        c.execute("BEGIN IMMEDIATE")
        try:
            c.execute("DELETE FROM runs WHERE class = ? AND term = ?", (class_name, term))
            cols = ("class", "term", "created", "tool_version", "model", "model_version", "extractor_version",
                    "source", "essays_read", "essays_skipped", "words", "settings", "reference")
            row = {"class": class_name, "term": term, "created": run_meta.get("created") or _now(),
                   "essays_read": len(essays), "essays_skipped": len(skipped), **run_meta}
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
                [(run_id, e.essay_id, e.writer, e.sha256, e.source, e.encoding, e.l1, e.level, e.task,
                  json.dumps(dict(e.meta), sort_keys=True), e.word_count, e.text) for e in essays],
            )
            names = [f.name for f in fields(Attachment)]
            c.executemany(
                f"INSERT INTO attachments (run_id, {', '.join(names)}) VALUES ({', '.join('?' * (len(names) + 1))})",
                [(run_id, *(getattr(a, n) for n in names)) for a in attachments],
            )
            self._insert_figures(run_id, pattern_figures)
            c.execute("COMMIT")
        except BaseException:
            c.execute("ROLLBACK")
            raise
        return run_id

    def _insert_figures(self, run_id: int, figures: Sequence[dict]) -> None:
        self.conn.executemany(
            "INSERT INTO pattern_stats VALUES (?, ?, ?, ?, ?)",
            [(run_id, f["governor"], f["governor_pos"], f["preposition"], json.dumps(f, sort_keys=True, default=_json_default))
             for f in figures],
        )

    def replace_figures(self, run_id: int, figures: Sequence[dict]) -> None:
        c = self.conn
        c.execute("BEGIN IMMEDIATE")
        try:
            c.execute("DELETE FROM pattern_stats WHERE run_id = ?", (run_id,))
            self._insert_figures(run_id, figures)
            c.execute("COMMIT")
        except BaseException:
            c.execute("ROLLBACK")
            raise

    def run(self, class_name: str, term: str) -> sqlite3.Row:
        row = self.conn.execute("SELECT * FROM runs WHERE class = ? AND term = ?", (class_name, term)).fetchone()
        if row is None:
            known = self.conn.execute("SELECT class, term FROM runs ORDER BY class, term").fetchall()
            listing = ", ".join(f"{r['class']}/{r['term']}" for r in known) or "none yet"
            raise WorkspaceError(f"no scan of class '{class_name}', term '{term}' in {self.root} (known: {listing})")
        return row

    def runs(self, class_name: str | None = None) -> list[sqlite3.Row]:
        if class_name is None:
            return self.conn.execute("SELECT * FROM runs ORDER BY class, created").fetchall()
        return self.conn.execute("SELECT * FROM runs WHERE class = ? ORDER BY created", (class_name,)).fetchall()

    def essays(self, run_id: int) -> list[sqlite3.Row]:
        return self.conn.execute("SELECT * FROM essays WHERE run_id = ? ORDER BY essay_id", (run_id,)).fetchall()

    def skipped(self, run_id: int) -> list[sqlite3.Row]:
        return self.conn.execute("SELECT * FROM skipped WHERE run_id = ? ORDER BY source", (run_id,)).fetchall()

    def notes(self, run_id: int) -> list[sqlite3.Row]:
        return self.conn.execute("SELECT * FROM notes WHERE run_id = ? ORDER BY rowid", (run_id,)).fetchall()

    def attachments(self, run_id: int) -> list[Attachment]:
        names = [f.name for f in fields(Attachment)]
        rows = self.conn.execute(
            f"SELECT {', '.join(names)} FROM attachments WHERE run_id = ? ORDER BY essay_id, gov_start, prep_start, preposition",
            (run_id,),
        ).fetchall()
        return [Attachment(**dict(zip(names, r))) for r in rows]

    def figures(self, run_id: int) -> list[dict]:
        rows = self.conn.execute(
            "SELECT figures FROM pattern_stats WHERE run_id = ? ORDER BY governor, governor_pos, preposition", (run_id,)
        ).fetchall()
        return [json.loads(r[0]) for r in rows]

    def writer_codes(self, class_name: str) -> dict[str, str]:
        """Stable pseudonyms for a class: "S01", "S02", … in order of first appearance.

        Runs are taken in term order, writers within a run alphabetically, so the
        codes of earlier terms never change when a later term is added.
        """
        codes: dict[str, str] = {}
        for run in self.runs_in_order(class_name):
            for (writer,) in self.conn.execute(
                "SELECT DISTINCT writer FROM essays WHERE run_id = ? ORDER BY writer", (run["id"],)
            ):
                if writer not in codes:
                    codes[writer] = f"S{len(codes) + 1:02d}"
        return codes

    def runs_in_order(self, class_name: str) -> list[sqlite3.Row]:
        """A class's runs in term order (term start date recorded in the run settings, then creation)."""
        rows = self.runs(class_name)
        return sorted(rows, key=lambda r: (json.loads(r["settings"]).get("term_start") or "", r["created"], r["term"]))

    def count_rows(self) -> dict[str, int]:
        tables = [r[0] for r in self.conn.execute("SELECT name FROM sqlite_master WHERE type='table' ORDER BY name")]
        return {t: self.conn.execute(f"SELECT COUNT(*) FROM {t}").fetchone()[0] for t in tables}

    def integrity(self) -> str:
        return self.conn.execute("PRAGMA integrity_check").fetchone()[0]


def _statements(sql: str) -> list[str]:
    return [s.strip() for s in sql.split(";") if s.strip()]


def _json_default(o):
    if hasattr(o, "item"):
        return o.item()
    if hasattr(o, "__dataclass_fields__"):
        return asdict(o)
    raise TypeError(f"not JSON serialisable: {type(o).__name__}")
