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
]

#: scope of a decision that applies to every class
ALL_CLASSES = "*"


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
        try:
            self._migrate()
        except BaseException:
            self.conn.close()
            raise
        self.conn.execute("PRAGMA journal_mode = WAL")

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
        """Replace the run of ``class_name``/``term`` atomically; return the new run id.

        A run with no essays is refused: it would silently replace a stored run with nothing.
        """
        if not essays:
            raise WorkspaceError(f"refusing to store a run of {class_name} / {term} with no essays; the earlier run is kept")
        c = self.conn
        c.execute("BEGIN IMMEDIATE")
        try:
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
        """The runs of a class and of every class linked to it, in term order.

        Order key: the term's start date (``--term-start``), then creation time.
        """
        group = sorted(self.class_group(class_name))
        marks = ", ".join("?" * len(group))
        return self.conn.execute(
            f"SELECT * FROM runs WHERE class IN ({marks}) ORDER BY term_start, created, term", group
        ).fetchall()

    # ----------------------------------------------------------- class links
    def link_classes(self, old: str, new: str) -> None:
        """Record that class ``new`` continues class ``old`` (same group of students)."""
        if old == new:
            raise WorkspaceError("a class cannot be linked to itself")
        with self._tx():
            self.conn.execute("INSERT OR IGNORE INTO class_links VALUES (?, ?, ?)", (old, new, _now()))

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

    # -------------------------------------------------------------- decisions
    def _tx(self):
        ws = self

        class _Tx:
            def __enter__(self_):
                ws.conn.execute("BEGIN IMMEDIATE")

            def __exit__(self_, exc_type, *rest):
                ws.conn.execute("ROLLBACK" if exc_type else "COMMIT")
                return False

        return _Tx()

    def dismiss(self, governor: str, preposition: str, *, class_name: str | None, reason: str, on: str | None = None) -> None:
        """Dismiss a pattern for one class (or all classes: ``class_name=None``); persists across terms."""
        scope = class_name or ALL_CLASSES
        day = on or _dt.date.today().isoformat()
        with self._tx():
            self.conn.execute("INSERT OR REPLACE INTO decisions VALUES (?, ?, ?, ?, ?)",
                              (scope, governor.lower(), preposition.lower(), reason, day))
            self.conn.execute("INSERT INTO decision_log VALUES (?, ?, ?, 'dismiss', ?, ?)",
                              (scope, governor.lower(), preposition.lower(), reason, day))

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

    def require_class(self, class_name: str) -> None:
        """Raise a clear error when no run of the class (or of a class linked to it) exists."""
        if not self.runs_in_order(class_name):
            known = sorted({r["class"] for r in self.runs()})
            raise WorkspaceError(f"no scans of class '{class_name}' in {self.root} (known: {', '.join(known) or 'none yet'})")

    def decisions_for(self, class_name: str) -> dict[tuple[str, str], sqlite3.Row]:
        """Active dismissals that apply to a class (its own, its group's, and all-class ones)."""
        scopes = sorted(self.class_group(class_name)) + [ALL_CLASSES]
        marks = ", ".join("?" * len(scopes))
        rows = self.conn.execute(f"SELECT * FROM decisions WHERE scope IN ({marks}) ORDER BY decided_on", scopes)
        return {(r["governor"], r["preposition"]): r for r in rows}

    # -------------------------------------------------------- figures in context
    def figures_in_context(self, class_name: str, term: str) -> list[dict]:
        """A run's figures with the teacher's decisions and a "since last term" line.

        Adds ``dismissed``, ``dismissed_reason``, ``dismissed_on``, ``since_last_term``,
        ``rate`` (instances per 10,000 words) and ``previous_rate``.
        """
        run = self.run(class_name, term)
        figures = self.figures(run["id"])
        decisions = self.decisions_for(class_name)
        order = [r["id"] for r in self.runs_in_order(class_name)]
        prev_id = order[order.index(run["id"]) - 1] if run["id"] in order and order.index(run["id"]) > 0 else None
        prev = {}
        prev_words = 0
        if prev_id is not None:
            prev_run = self.conn.execute("SELECT * FROM runs WHERE id = ?", (prev_id,)).fetchone()
            prev_words = prev_run["words"]
            prev = {(f["governor"], f["governor_pos"], f["preposition"]): f for f in self.figures(prev_id)}
        for f in figures:
            d = decisions.get((f["governor"], f["preposition"]))
            f["dismissed"] = d is not None
            f["dismissed_reason"] = d["reason"] if d else ""
            f["dismissed_on"] = d["decided_on"] if d else ""
            f["rate"] = per_10k(f["learner_count"], run["words"])
            p = prev.get((f["governor"], f["governor_pos"], f["preposition"]))
            f["previous_rate"] = per_10k(p["learner_count"], prev_words) if p else (0.0 if prev_id else None)
            f["since_last_term"] = since_line(f, p, prev_id is not None, f["previous_rate"])
        return figures

    def writer_progress(self, class_name: str, term: str, keys: Iterable[tuple[str, str, str]],
                        same_writer: dict[str, str] | None = None) -> dict[str, list[dict]]:
        """For each writer of this run: their counts of ``keys`` last term and this term.

        :param same_writer: optional map writer id -> writer id of the same person in
            earlier terms (from fuzzy matching); exact ids match without it.
        """
        run = self.run(class_name, term)
        order = [r["id"] for r in self.runs_in_order(class_name)]
        idx = order.index(run["id"])
        if idx == 0:
            return {}
        prev_id = order[idx - 1]
        keys = list(keys)

        def counts(run_id: int) -> dict[str, dict]:
            out: dict[str, dict] = {}
            for a in self.attachments(run_id):
                if a.key in keys:
                    out.setdefault(a.writer, {}).setdefault(a.key, 0)
                    out[a.writer][a.key] += 1
            return out

        now, before = counts(run["id"]), counts(prev_id)
        prev_writers = {r["writer"] for r in self.conn.execute("SELECT writer FROM essays WHERE run_id = ?", (prev_id,))}
        result: dict[str, list[dict]] = {}
        for (writer,) in self.conn.execute("SELECT DISTINCT writer FROM essays WHERE run_id = ? ORDER BY writer", (run["id"],)):
            earlier = (same_writer or {}).get(writer, writer)
            if earlier not in prev_writers:
                continue
            rows = []
            for k in keys:
                a, b = before.get(earlier, {}).get(k, 0), now.get(writer, {}).get(k, 0)
                if a or b:
                    rows.append({"governor": k[0], "governor_pos": k[1], "preposition": k[2], "last_term": a, "this_term": b})
            result[writer] = rows
        return result

    def count_rows(self) -> dict[str, int]:
        tables = [r[0] for r in self.conn.execute("SELECT name FROM sqlite_master WHERE type='table' ORDER BY name")]
        return {t: self.conn.execute(f"SELECT COUNT(*) FROM {t}").fetchone()[0] for t in tables}

    def integrity(self) -> str:
        return self.conn.execute("PRAGMA integrity_check").fetchone()[0]


def per_10k(count: int, words: int) -> float:
    """Instances per 10,000 words (0 when there are no words)."""
    return round(10_000 * count / words, 2) if words else 0.0


def since_line(f: dict, prev: dict | None, has_previous: bool, prev_rate: float | None) -> str:
    """One short line comparing a pattern with the previous term of the class."""
    if not has_previous:
        return "first term on record"
    if prev is None or not prev.get("learner_count"):
        return "new this term" if f.get("learner_count") else "not seen this term or last"
    if prev.get("flagged"):
        return f"also flagged last term ({prev_rate:.1f} → {f['rate']:.1f} per 10,000 words)"
    return f"seen last term but not flagged ({prev_rate:.1f} → {f['rate']:.1f} per 10,000 words)"


def _statements(sql: str) -> list[str]:
    return [s.strip() for s in sql.split(";") if s.strip()]


def _json_default(o):
    if hasattr(o, "item"):
        return o.item()
    if hasattr(o, "__dataclass_fields__"):
        return asdict(o)
    raise TypeError(f"not JSON serialisable: {type(o).__name__}")
