"""Benchmark: how well the over-use flag finds learner preposition errors, per class size,
on text we did not write.

    python bench/bench_detection.py [--sets planted,control,jfleg[,pooled]] [--sizes 12,25,120,1000]
        [--scan-args "--min-count 2 --max-dispersion 1"] [--reference NAME ...] [--processes 2]
        [--classes 8] [--isolated] [--fresh] [--list 8] [--data DIR] [--hingeword CMD] [--tool-src DIR]

Not a test: nothing is asserted. It prints one table (recall, precision and false
flags per set and class size), a short listing of the first flags of each set in the
export's order, and writes the figures to ``build/bench-detection/results.json``
(and to ``results-<settings>.json``, so that runs at different settings sit side by
side). The tool is used only through its command line: ``hingeword scan`` for each
class (the harness's ``--scan-args`` and ``--reference`` are passed through) and
``hingeword export -o x.json`` (with ``--concordance`` for JFLEG), whose JSON is read.

Data: ``shared/data/`` beside the repository (``--data``; or ``HINGEWORD_SHARED_DATA``).
Without it the benchmark says so and exits 0; a set whose part of the data is missing
is skipped with a message.

Sets
----

**planted** — held-out native text with planted learner errors. The native text is
the held-out documents of ``shared/data/native/`` as ``scripts/native_sources.py``
reads them (one document in ten by the hash rule; these never go into a bundled
reference): film reviews (Pang & Lee 2004, CC BY 4.0), product reviews (Hu & Liu 2004,
CC BY 4.0), MASC written genres (Ide et al. 2010), UD English EWT (Silveira et al.
2014, CC BY-SA 4.0) and GUM (Zeldes 2017, CC BY-NC-SA 4.0) written genres, State of
the Union addresses (public domain); see ``bench/detection_sources.py`` for what is
kept. It is cut into essays of about 150–330 words at sentence boundaries (about
1,050 essays, 250,000 words), one essay per writer, shuffled with a fixed seed.
Twenty typical learner errors (``bench/detection_plant.py``: discuss about, depend
of, interested on, arrive to, married with, listen + object, afraid about/from,
enter into, aware about, focus in, contribute in, wait + object, search + object,
consist in, explain about, emphasize on, reach to, good in, capable to) are planted,
each in about 3–12 % of the writers, once or twice: by rewriting a real occurrence
of the correct form where the essay has one, otherwise by inserting one short
sentence. **The inserted sentences are invented** (templates with varied objects,
marked ``insert`` in the ground truth); most plantings are insertions, because a
250-word essay rarely contains the governor. Classes: ``--classes`` classes (default
8) of each size under 100 (12 and 25 writers by default), document-disjoint, each
scanned as its own ``--class`` in one shared workspace per size (``--isolated``: one
workspace per class), figures given per class on average; one class for each larger
size (120 writers disjoint from the small classes; the largest size takes every
other essay first and then the small classes' essays). The ground truth (planted
keys with their uses and writers, every planted sentence) is written beside the
essays (``essays/planted/<class>.truth.json``).

A flag is **true** when its key is a planted error of that class, matched on governor
lemma + preposition (the parser may call "married" or "interested" a verb or an
adjective); every other flag is a **false flag**. **Recall** = planted patterns
flagged / planted patterns with at least 3 planted uses by 2+ writers in the class
(the tool's own minimum); "recall all" = over every planted pattern present.
**Precision** = true flags / flags.

**control** — the same essays without planting, scanned the same way: every flag is
false; reported also per 10,000 words.

**jfleg** — real learner sentences (each side scanned in a workspace of its own): JFLEG (Napoles, Sakaguchi & Tetreault 2017,
"JFLEG: A Fluency Corpus and Benchmark for Grammatical Error Correction", EACL;
CC BY-NC-SA 4.0), read from ``shared/data/learner/jfleg.tar.gz`` and never copied into
the repository. The 1,501 learner sentences of dev + test (``.src``), detokenised
lightly, are grouped into pseudo-essays of 5 consecutive sentences (a pseudo-writer
each; JFLEG does not say which sentences share a writer), scanned as one class; each
of the four corrections (``.ref0``–``.ref3``) is grouped the same way and scanned as
its own class. Truth comes from the same sentences scanned one sentence an essay
(in a second workspace) and exported with ``--concordance``: a learner
(governor lemma, preposition) in a sentence is **corrected by all four** when no
correction of that sentence has it, **partly** when some have it. A flag on the
learner side is confirmed when its key is corrected by all four in at least one of
its sentences (or partly). **Recurring error patterns**: at least 3 uses corrected by
all four, by 2+ pseudo-writers, and at least half of the pattern's uses corrected.
Every flag on a corrected side is false.

**pooled** (optional, not in the default ``--sets``) — the largest planted set's
essays split into classes of 25 in one workspace, to compare with the one-class scan
of the same essays: the same evidence should give the same flags whatever the
grouping once the tool pools a workspace's classes.

Caching: everything lives under ``build/bench-detection/`` (git-ignored): generated
essays (regenerated only when the data, the seeds or the bench modules change),
workspaces whose parse caches make re-runs at other thresholds cheap, exports and
logs. ``--fresh`` deletes that folder first. Fixed seeds: the same data give the same
essays, plantings and figures. To measure a fixed version of the tool while ``src/``
is being edited, unpack one (``mkdir -p build/tool-snapshot && git archive HEAD src
rules | tar x -C build/tool-snapshot``) and pass ``--tool-src build/tool-snapshot/src``
(the scans' PYTHONPATH; the harness itself and ``scripts/native_sources.py`` keep the
working tree); results.json records it, the git head and how many files under
``src/`` differ from it. A workspace written by a newer
tool may not open with an older one: use ``--fresh`` after switching.

Limits of the figures
---------------------

* Planted errors are not real errors: the sentences around them are native and
  fluent, which makes parsing easier than in learner writing, and most of them
  sit in invented template sentences, which are simpler than real ones.
* Rates, counts and the error list are our choice; recall at 12 and 25 writers
  depends mostly on how many planted patterns reach the 3-uses-by-2-writers floor.
* The film reviews (more than half of the text) are lower-cased and tokenised in
  the source; capitals are restored only at sentence starts and for "I", so names
  stay lower case.
* JFLEG is small (1,501 sentences, about 28,000 words), its grouping into writers
  is invented, and a correction can change a preposition for reasons other than
  the governor (a rewritten sentence drops the whole phrase): "corrected by all
  four" is evidence, not proof. Use it as a check on real learner text, not to tune
  thresholds.
"""

from __future__ import annotations

import argparse
import csv
import datetime as _dt
import hashlib
import io
import json
import os
import random
import re
import shlex
import shutil
import subprocess
import sys
import tarfile
import time
from collections import Counter, defaultdict
from dataclasses import asdict
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))

import detection_plant as plant_mod  # noqa: E402
import detection_sources as sources_mod  # noqa: E402

BUILD = ROOT / "build" / "bench-detection"
TERM = "bench"
TERM_START = "2026-01-05"
GENERATOR_VERSION = 2
SEED_SPARSE = 47
SEED_CUT, SEED_SHUFFLE, SEED_ASSIGN, SEED_PLANT = 20261203, 11, 29, 31
JFLEG_GROUP = 5
POOLED_CLASS_SIZE = 25


def say(msg: str) -> None:
    print(msg, file=sys.stderr, flush=True)


def _rows(doc) -> list[dict]:
    """The rows of a JSON export: ``{"run", "columns", "rows"}`` (or a bare list, from before the run record)."""
    return doc["rows"] if isinstance(doc, dict) else doc


class BenchError(RuntimeError):
    pass


# =========================================================================== the tool


class Tool:
    """The ``hingeword`` command line: scan a folder, export its run as JSON."""

    def __init__(self, cmd: list[str], scan_extra: list[str], logs: Path, src: Path | None = None):
        self.cmd = cmd
        self.env = {"PYTHONPATH": str(src.resolve())} if src else {}
        self.scan_extra = scan_extra
        self.logs = logs
        logs.mkdir(parents=True, exist_ok=True)
        help_text = self._run(["scan", "--help"], "scan-help", env={"COLUMNS": "200"}).stdout
        self.scan_options = set(re.findall(r"(--[a-z][a-z-]+)", help_text))
        self.first_line = ""
        self.version = self._run(["--version"], "version").stdout.strip()

    def _run(self, args: list[str], log: str, env: dict | None = None) -> subprocess.CompletedProcess:
        full = self.cmd + args
        proc = subprocess.run(full, capture_output=True, text=True, env={**os.environ, **self.env, **(env or {})})
        (self.logs / f"{log}.log").write_text(
            f"$ {shlex.join(full)}\n(exit {proc.returncode})\n--- stdout\n{proc.stdout}\n--- stderr\n{proc.stderr}",
            encoding="utf-8")
        if proc.returncode != 0:
            tail = "\n".join((proc.stderr or proc.stdout).strip().splitlines()[-6:])
            raise BenchError(f"{shlex.join(full)} failed (exit {proc.returncode}):\n{tail}\n"
                             f"(full log: {self.logs / (log + '.log')})")
        return proc

    def scan(self, folder: Path, workspace: Path, cls: str) -> None:
        args = ["scan", str(folder), "--class", cls, "--term", TERM, "--workspace", str(workspace)]
        for opt, extra in (("--quiet", []), ("--top", ["0"]), ("--term-start", [TERM_START])):
            if opt in self.scan_options:
                args += [opt, *extra]
        proc = self._run(args + self.scan_extra, f"scan-{workspace.name}-{cls}")
        if not self.first_line:
            self.first_line = (proc.stdout.strip().splitlines() or [""])[0]

    def export(self, workspace: Path, cls: str, out: Path, concordance: Path | None = None) -> list[dict]:
        out.parent.mkdir(parents=True, exist_ok=True)
        args = ["export", "--class", cls, "--term", TERM, "--workspace", str(workspace), "-o", str(out)]
        if concordance is not None:
            args += ["--concordance", str(concordance), "--names", "real"]
        self._run(args, f"export-{workspace.name}-{cls}")
        return _rows(json.loads(out.read_text(encoding="utf-8")))


def default_tool_cmd() -> list[str]:
    beside = Path(sys.executable).with_name("hingeword")
    if beside.exists():
        return [str(beside)]
    found = shutil.which("hingeword")
    if found:
        return [found]
    raise BenchError("the hingeword command was not found: activate the venv or pass --hingeword")


# =========================================================================== export rows


def slot(prep) -> str:
    p = str(prep).strip().lower()
    return "-" if p in ("-", "object", "+ object", "") else p


def is_flagged(row: dict) -> bool:
    return row.get("flagged") in (True, "true", "True", 1, "1")


#: verb lemmas of the planted adjectives ("she married with", "I am interested on" parsed as verbs)
VERB_ALIASES = {"marry": "married", "interest": "interested"}


def key_of(row: dict) -> str:
    """governor|preposition, the verb lemma of a planted adjective mapped to the adjective."""
    gov = str(row["governor"])
    if row.get("governor_pos") == "VERB":
        gov = VERB_ALIASES.get(gov, gov)
    return f"{gov}|{slot(row['preposition'])}"


def label(key: str) -> str:
    gov, prep = key.split("|", 1)
    return f"{gov} + object" if prep == "-" else f"{gov} {prep}"


def seen_by_key(rows: list[dict]) -> dict[str, dict]:
    """What the tool counted per governor + preposition (all parts of speech together)."""
    out: dict[str, dict] = {}
    for r in rows:
        k = key_of(r)
        s = out.setdefault(k, {"count": 0, "writers": 0, "statuses": [], "flagged": False})
        s["count"] += int(r.get("learner_count") or 0)
        s["writers"] = max(s["writers"], int(r.get("learner_writers") or 0))
        s["statuses"].append(f"{r.get('governor_pos')}: {r.get('status')}")
        s["flagged"] = s["flagged"] or is_flagged(r)
    return out


def flag_rows(rows: list[dict]) -> list[dict]:
    return [r for r in rows if is_flagged(r)]


# =========================================================================== essays


def _file_sig(path: Path) -> list:
    st = path.stat()
    return [path.name, st.st_size, int(st.st_mtime)]


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()[:16]


def write_if_changed(path: Path, text: str) -> None:
    if path.exists() and path.read_text(encoding="utf-8") == text:
        return
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")


def _layout(pool: list[dict], sizes: list[int], n_classes: int) -> dict[str, list[str]]:
    """Class name -> writers. Sizes under 100: ``n_classes`` document-disjoint classes each;
    other sizes: one class each, from the essays the small classes do not use, then theirs."""
    small = [s for s in sizes if s < 100]
    large = [s for s in sizes if s >= 100]
    slots = [(s, k) for s in small for k in range(1, n_classes + 1)]
    members: dict[tuple, list[str]] = {sk: [] for sk in slots}
    owner: dict[str, tuple] = {}
    used: set[str] = set()
    for e in pool:
        owners = {owner[d] for d in e["doc_ids"] if d in owner}
        if len(owners) > 1:
            continue
        if owners:
            (target,) = owners
            if len(members[target]) >= target[0]:
                continue
        else:
            target = next((sk for sk in slots if len(members[sk]) < sk[0]), None)
            if target is None:
                break
        members[target].append(e["writer"])
        used.add(e["writer"])
        for d in e["doc_ids"]:
            owner[d] = target
    layout = {f"{s}-{k:02d}": members[(s, k)] for s, k in slots}
    rest = [e["writer"] for e in pool if e["writer"] not in used]
    taken: set[str] = set()
    for s in sorted(large):
        fresh = [w for w in rest if w not in taken]
        order = fresh + [e["writer"] for e in pool if e["writer"] in used] + [w for w in rest if w in taken]
        chosen = order[:s]
        if s != max(large):
            taken.update(chosen)
        layout[f"{s}-01"] = chosen
    return layout


def build_essays(data_dir: Path, sizes: list[int], n_classes: int) -> dict:
    """Generate (or reuse) the essay pool, the plantings and the class folders."""
    native = data_dir / "native"
    edir = BUILD / "essays"
    key = {
        "generator": GENERATOR_VERSION,
        "seeds": [SEED_CUT, SEED_SHUFFLE, SEED_ASSIGN, SEED_PLANT],
        "sizes": sizes,
        "classes": n_classes,
        "data": sorted(_file_sig(p) for p in native.glob("*.tar.gz")),
        "code": {p.name: _sha(p) for p in (ROOT / "scripts" / "native_sources.py", HERE / "detection_sources.py",
                                             HERE / "detection_plant.py")},
    }
    key_path, pool_path = edir / "key.json", edir / "pool.json"
    if key_path.exists() and pool_path.exists() and json.loads(key_path.read_text()) == key:
        say("essays: reusing the generated essays in build/bench-detection/essays")
        return json.loads(pool_path.read_text(encoding="utf-8"))
    say("essays: reading the held-out native documents …")
    t = time.perf_counter()
    docs = sources_mod.held_out_docs(ROOT, data_dir)
    essays = sources_mod.cut_essays(docs, SEED_CUT)
    random.Random(SEED_SHUFFLE).shuffle(essays)
    choices = plant_mod.assign([list(e.sentences) for e in essays], random.Random(SEED_ASSIGN))
    rng = random.Random(SEED_PLANT)
    pool = []
    for i, (e, ch) in enumerate(zip(essays, choices), 1):
        writer = f"w{i:04d}"
        res = plant_mod.plant(e.essay_id, writer, list(e.sentences), ch, rng)
        pool.append({
            "writer": writer, "essay_id": e.essay_id, "source": e.source, "genre": e.genre, "doc_ids": list(e.doc_ids),
            "native": e.text, "planted_text": " ".join(res.sentences), "words_native": e.words,
            "words_planted": sum(len(s.split()) for s in res.sentences),
            "planted": [asdict(p) for p in res.planted],
        })
    layout = _layout(pool, sizes, n_classes)
    by_writer = {e["writer"]: e for e in pool}
    if edir.exists():
        for sub in ("planted", "control", "sparse"):
            if (edir / sub).exists():
                shutil.rmtree(edir / sub)
    for cls, writers in layout.items():
        for w in writers:
            write_if_changed(edir / "planted" / cls / f"{w}.txt", by_writer[w]["planted_text"] + "\n")
            write_if_changed(edir / "control" / cls / f"{w}.txt", by_writer[w]["native"] + "\n")
        truth = class_truth([by_writer[w] for w in writers])
        write_if_changed(edir / "planted" / f"{cls}.truth.json", json.dumps(truth, indent=1, ensure_ascii=False) + "\n")
    big = max((s for s in sizes if s >= 100), default=None)
    if big is not None:
        build_sparse(pool, layout[f"{big}-01"], f"{big}-01", edir)
    data = {"pool": pool, "layout": layout, "documents": len(docs)}
    pool_path.parent.mkdir(parents=True, exist_ok=True)
    pool_path.write_text(json.dumps(data, ensure_ascii=False), encoding="utf-8")
    key_path.write_text(json.dumps(key, indent=1) + "\n", encoding="utf-8")
    n_ins = sum(p["how"] == "insert" for e in pool for p in e["planted"])
    n_all = sum(len(e["planted"]) for e in pool)
    say(f"essays: {len(pool)} essays ({sum(e['words_native'] for e in pool):,} words) from {len(docs)} held-out "
        f"documents; {n_all} planted uses ({n_all - n_ins} rewritten, {n_ins} inserted); "
        f"{time.perf_counter() - t:.1f} s")
    return data


def build_sparse(pool: list[dict], writers: list[str], cls: str, edir: Path) -> None:
    """The largest class again with every error kept in only a few writers (2 to 6, by the
    error's place in the list), as rare but systematic errors sit in a big corpus; the
    other writers' essays are their native text. Written to ``essays/sparse/<cls>/``."""
    by_writer = {e["writer"]: e for e in pool}
    keep: dict[str, set[str]] = {}
    for i, err in enumerate(plant_mod.ERRORS):
        carriers = [w for w in writers if any(p["key"] == err.key for p in by_writer[w]["planted"])]
        keep[err.key] = set(carriers[: 2 + i % 5])
    sparse = []
    for w in writers:
        e = by_writer[w]
        uses = Counter(p["key"] for p in e["planted"] if w in keep.get(p["key"], ()))
        choices = [(plant_mod.KEYS[k], n) for k, n in sorted(uses.items())]
        rng = random.Random(f"{SEED_SPARSE}:{w}")
        sentences = sources_mod.split_sentences(e["native"]) if choices else None
        if choices:
            res = plant_mod.plant(e["essay_id"], w, sentences, choices, rng)
            text, planted = " ".join(res.sentences), [asdict(p) for p in res.planted]
        else:
            text, planted = e["native"], []
        write_if_changed(edir / "sparse" / cls / f"{w}.txt", text + "\n")
        sparse.append({**e, "planted": planted, "words_planted": len(text.split())})
    truth = class_truth(sparse)
    write_if_changed(edir / "sparse" / f"{cls}.truth.json", json.dumps(truth, indent=1, ensure_ascii=False) + "\n")
    for e in sparse:
        by_writer[e["writer"]]["words_sparse"] = e["words_planted"]


def class_truth(essays: list[dict]) -> dict:
    """Planted keys of a class with their uses and writers, and every planted sentence."""
    uses: Counter = Counter()
    writers: dict[str, set] = defaultdict(set)
    how: dict[str, Counter] = defaultdict(Counter)
    planted = []
    for e in essays:
        for p in e["planted"]:
            uses[p["key"]] += 1
            writers[p["key"]].add(e["writer"])
            how[p["key"]][p["how"]] += 1
            planted.append(p)
    keys = {k: {"error": plant_mod.KEYS[k].name, "uses": uses[k], "writers": sorted(writers[k]),
                "rewritten": how[k]["rewrite"], "inserted": how[k]["insert"]} for k in sorted(uses)}
    return {"writers": len(essays), "words": sum(e["words_planted"] for e in essays), "keys": keys,
            "planted": planted,
            "note": "planted uses marked 'insert' are invented sentences; 'rewrite' changes a real native sentence"}


# =========================================================================== evaluation


def eval_class(cls: str, rows: list[dict], truth: dict | None, words: int, writers: int) -> dict:
    keys = (truth or {}).get("keys", {})
    seen = seen_by_key(rows)
    flags = []
    for r in flag_rows(rows):
        k = key_of(r)
        flags.append({"key": k, "pos": r.get("governor_pos"), "count": r.get("learner_count"),
                      "writers": r.get("learner_writers"), "reference": f"{r.get('reference_count')}/{r.get('reference_governor_count')}",
                      "status": r.get("status"), "true": k in keys})
    planted = {}
    for k, t in keys.items():
        s = seen.get(k, {"count": 0, "writers": 0, "statuses": ["not extracted"], "flagged": False})
        planted[k] = {"uses": t["uses"], "writers": len(t["writers"]),
                      "eligible": t["uses"] >= 3 and len(t["writers"]) >= 2,
                      "tool_count": s["count"], "tool_writers": s["writers"], "status": "; ".join(s["statuses"]),
                      "flagged": s["flagged"]}
    n_true = sum(f["true"] for f in flags)
    return {
        "class": cls, "writers": writers, "words": words, "flags": flags,
        "n_flags": len(flags), "n_true": n_true, "n_false": len(flags) - n_true,
        "planted_present": len(planted), "eligible": sum(p["eligible"] for p in planted.values()),
        "eligible_flagged": sum(p["eligible"] and p["flagged"] for p in planted.values()),
        "planted_flagged": sum(p["flagged"] for p in planted.values()),
        "planted": planted,
    }


def _ratio(a: float, b: float):
    return round(a / b, 3) if b else None


def summarise(set_name: str, size: int, classes: list[dict], seconds: float) -> dict:
    n = len(classes)
    tot = lambda k: sum(c[k] for c in classes)  # noqa: E731
    words = tot("words")
    row = {
        "set": set_name, "size": size, "classes": n, "writers_per_class": round(tot("writers") / n, 1),
        "words_per_class": round(words / n), "flags_per_class": round(tot("n_flags") / n, 2),
        "true_per_class": round(tot("n_true") / n, 2), "false_per_class": round(tot("n_false") / n, 2),
        "false_per_10k_words": round(10000 * tot("n_false") / words, 2) if words else None,
        "seconds": round(seconds, 1),
    }
    if set_name != "control":
        row.update({
            "planted_per_class": round(tot("planted_present") / n, 2), "eligible_per_class": round(tot("eligible") / n, 2),
            "recall": _ratio(tot("eligible_flagged"), tot("eligible")),
            "recall_all": _ratio(tot("planted_flagged"), tot("planted_present")),
            "precision": _ratio(tot("n_true"), tot("n_flags")),
        })
    return row


# =========================================================================== planted / control


def workspace_for(mode_root: Path, group: str, cls: str, isolated: bool) -> Path:
    return mode_root / (f"{group}--{cls}" if isolated else group)


def run_sized_sets(args, tool: Tool, data: dict, which: str) -> tuple[list[dict], list[dict]]:
    """Scan and score the planted or control classes of every size."""
    by_writer = {e["writer"]: e for e in data["pool"]}
    rows, details = [], []
    ws_root = BUILD / ("ws-isolated" if args.isolated else "ws")
    for size in args.sizes:
        names = sorted(c for c in data["layout"] if c.split("-")[0] == str(size))
        if which == "sparse" and size != max(args.sizes):
            continue
        if not names:
            continue
        t0 = time.perf_counter()
        results = []
        for cls_short in names:
            cls = f"{which}-{cls_short}"
            writers = data["layout"][cls_short]
            folder = BUILD / "essays" / which / cls_short
            ws = workspace_for(ws_root, f"{which}-{size}", cls, args.isolated)
            t = time.perf_counter()
            words = sum(by_writer[w][{"planted": "words_planted", "sparse": "words_sparse"}.get(which, "words_native")]
                        for w in writers)
            tool.scan(folder, ws, cls)
            rows_ = tool.export(ws, cls, BUILD / "exports" / ws.parent.name / ws.name / f"{cls}.json")
            truth = None
            if which in ("planted", "sparse"):
                truth = json.loads((BUILD / "essays" / which / f"{cls_short}.truth.json").read_text(encoding="utf-8"))
            res = eval_class(cls, rows_, truth, words, len(writers))
            results.append(res)
            extra = f", {res['n_true']} true" if which != "control" else ""
            say(f"[{which} {size}] {cls}: {len(writers)} writers, {words:,} words → {res['n_flags']} flags{extra} "
                f"({time.perf_counter() - t:.1f} s)")
        row = summarise(which, size, results, time.perf_counter() - t0)
        row["actual_writers"] = results[0]["writers"] if len(results) == 1 else None
        rows.append(row)
        details.append({"set": which, "size": size, "classes": results})
    return rows, details


def run_pooled(args, tool: Tool, data: dict, single: dict | None) -> dict | None:
    big = max((s for s in args.sizes if s >= 100), default=None)
    if big is None:
        say("[pooled] needs a size of 100 or more in --sizes; skipped")
        return None
    writers = data["layout"][f"{big}-01"]
    by_writer = {e["writer"]: e for e in data["pool"]}
    t0 = time.perf_counter()
    ws_root = BUILD / ("ws-isolated" if args.isolated else "ws")
    results = []
    for k in range(0, len(writers), POOLED_CLASS_SIZE):
        part = writers[k:k + POOLED_CLASS_SIZE]
        cls = f"pooled-{big}-{k // POOLED_CLASS_SIZE + 1:02d}"
        folder = BUILD / "essays" / "pooled" / cls
        for w in part:
            write_if_changed(folder / f"{w}.txt", by_writer[w]["planted_text"] + "\n")
        truth = class_truth([by_writer[w] for w in part])
        ws = workspace_for(ws_root, f"pooled-{big}", cls, args.isolated)
        tool.scan(folder, ws, cls)
        rows_ = tool.export(ws, cls, BUILD / "exports" / ws.parent.name / ws.name / f"{cls}.json")
        results.append(eval_class(cls, rows_, truth, sum(by_writer[w]["words_planted"] for w in part), len(part)))
        say(f"[pooled {big}] {cls}: {results[-1]['n_flags']} flags")
    union = Counter(f["key"] for r in results for f in r["flags"])
    truth_all = class_truth([by_writer[w] for w in writers])["keys"]
    single_keys = {f["key"] for f in single["flags"]} if single else None
    out = {
        "set": "pooled", "size": big, "classes": len(results), "class_size": POOLED_CLASS_SIZE,
        "flags_per_class": round(sum(r["n_flags"] for r in results) / len(results), 2),
        "union_flags": len(union), "union_true": sum(k in truth_all for k in union),
        "union_false": sum(k not in truth_all for k in union),
        "flag_keys": dict(union.most_common()),
        "seconds": round(time.perf_counter() - t0, 1),
    }
    if single_keys is not None:
        out["single_class_flags"] = len(single_keys)
        out["in_both"] = len(single_keys & set(union))
        out["only_single"] = sorted(single_keys - set(union))
        out["only_pooled_classes"] = sorted(set(union) - single_keys)
    return out


# =========================================================================== JFLEG


def read_jfleg(path: Path) -> dict[str, list[str]]:
    """``src`` and ``ref0``–``ref3``: dev then test, one sentence a line, aligned."""
    parts: dict[str, dict[str, list[str]]] = defaultdict(dict)
    with tarfile.open(path, "r:gz") as tar:
        for m in tar.getmembers():
            name = Path(m.name).name
            mt = re.fullmatch(r"(dev|test)\.(src|ref[0-3])", name)
            if m.isfile() and mt:
                text = tar.extractfile(m).read().decode("utf-8")
                parts[mt.group(2)][mt.group(1)] = text.split("\n")
    out = {}
    for side, d in parts.items():
        lines = []
        for split in ("dev", "test"):
            ls = d[split]
            if ls and ls[-1] == "":
                ls = ls[:-1]
            lines += ls
        out[side] = lines
    n = {len(v) for v in out.values()}
    if len(n) != 1 or set(out) != {"src", "ref0", "ref1", "ref2", "ref3"}:
        raise BenchError(f"unexpected JFLEG layout in {path}: {({k: len(v) for k, v in out.items()})}")
    return out


def detok_jfleg(line: str, ns) -> str:
    return ns.detokenise(line.split()) if line.strip() else ""


def _write_csv(path: Path, rows: list[tuple[str, str]]) -> None:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["writer", "text"])
    w.writerows(rows)
    write_if_changed(path, buf.getvalue())


def run_jfleg(args, tool: Tool, data_dir: Path) -> dict | None:
    path = data_dir / "learner" / "jfleg.tar.gz"
    if not path.exists():
        say(f"[jfleg] {path} not found: skipped")
        return None
    t0 = time.perf_counter()
    ns = sources_mod.load_reader(ROOT)
    raw = read_jfleg(path)
    sides = ["src", "ref0", "ref1", "ref2", "ref3"]
    sents = {s: [detok_jfleg(x, ns) for x in raw[s]] for s in sides}
    n = len(sents["src"])
    writer_of = [f"j{i // JFLEG_GROUP + 1:03d}" for i in range(n)]
    jdir = BUILD / "essays" / "jfleg"
    row_to_sentence: dict[str, list[int]] = {}
    for s in sides:
        essays = defaultdict(list)
        for i, x in enumerate(sents[s]):
            if x:
                essays[writer_of[i]].append(x)
        _write_csv(jdir / f"{s}-essays" / "essays.csv", [(w, " ".join(v)) for w, v in essays.items()])
        kept = [i for i, x in enumerate(sents[s]) if x]
        row_to_sentence[s] = kept
        _write_csv(jdir / f"{s}-sentences" / "sentences.csv", [(writer_of[i], sents[s][i]) for i in kept])
    ws_root = BUILD / ("ws-isolated" if args.isolated else "ws")
    exports = BUILD / "exports" / ws_root.name
    per_sentence: dict[str, list[set]] = {}
    instances: list[tuple[int, str, str]] = []  # learner (sentence, key, writer)
    class_rows: dict[str, list[dict]] = {}
    for s in sides:
        t = time.perf_counter()
        cls = f"jfleg-{s}"
        # each side is its own user's workspace: the four corrections are near-copies of one
        # text, and pooling them (or pooling them with the learner side) would count the same
        # sentences several times
        ws = workspace_for(ws_root, f"jfleg-{s}", cls, args.isolated)
        tool.scan(jdir / f"{s}-essays", ws, cls)
        class_rows[s] = tool.export(ws, cls, exports / ws.name / f"{cls}.json")
        scls = f"jfleg-sentences-{s}"
        sws = workspace_for(ws_root, "jfleg-sentences", scls, args.isolated)
        tool.scan(jdir / f"{s}-sentences", sws, scls)
        kpath = exports / sws.name / f"{scls}.concordance.json"
        tool.export(sws, scls, exports / sws.name / f"{scls}.json", concordance=kpath)
        sets = [set() for _ in range(n)]
        for r in _rows(json.loads(kpath.read_text(encoding="utf-8"))):
            m = re.search(r"#(\d+)$", str(r.get("essay_id", "")))
            if not m:
                raise BenchError(f"concordance row without a CSV row number in its essay id: {r.get('essay_id')!r}")
            i = row_to_sentence[s][int(m.group(1)) - 1]
            k = key_of(r)
            sets[i].add(k)
            if s == "src":
                instances.append((i, k, str(r.get("writer"))))
        per_sentence[s] = sets
        say(f"[jfleg] {s}: {sum(bool(x) for x in sents[s])} sentences, {len(flag_rows(class_rows[s]))} flags "
            f"({time.perf_counter() - t:.1f} s)")
    # truth per learner instance
    stat: dict[str, dict] = defaultdict(lambda: {"uses": 0, "all": 0, "partly": 0, "writers": set(), "all_writers": set()})
    for i, k, w in instances:
        kept_by = sum(k in per_sentence[r][i] for r in sides[1:])
        st = stat[k]
        st["uses"] += 1
        st["writers"].add(w)
        if kept_by == 0:
            st["all"] += 1
            st["all_writers"].add(w)
        elif kept_by < 4:
            st["partly"] += 1
    recurring = {k for k, st in stat.items()
                 if st["all"] >= 3 and len(st["all_writers"]) >= 2 and st["all"] >= 0.5 * st["uses"]}
    learner_flags = []
    for r in flag_rows(class_rows["src"]):
        k = key_of(r)
        st = stat.get(k)
        verdict = "not in sentences" if st is None else "all four" if st["all"] else "partly" if st["partly"] else "kept"
        learner_flags.append({"key": k, "pos": r.get("governor_pos"), "count": r.get("learner_count"),
                              "writers": r.get("learner_writers"), "status": r.get("status"),
                              "corrected": verdict, "recurring": k in recurring,
                              "corrected_uses": (st or {}).get("all", 0), "partly_uses": (st or {}).get("partly", 0),
                              "uses": (st or {}).get("uses", 0)})
    flagged_keys = {f["key"] for f in learner_flags}
    seen = seen_by_key(class_rows["src"])
    recurring_list = []
    for k in sorted(recurring, key=lambda k: (-stat[k]["all"], k)):
        s_ = seen.get(k, {"count": 0, "writers": 0, "statuses": ["not extracted"]})
        recurring_list.append({"key": k, "uses": stat[k]["uses"], "corrected_all": stat[k]["all"],
                               "partly": stat[k]["partly"], "writers": len(stat[k]["all_writers"]),
                               "flagged": k in flagged_keys, "status": "; ".join(s_["statuses"])})
    words = {s: sum(len(x.split()) for x in sents[s]) for s in sides}
    ref_flags = {s: [{"key": key_of(r), "pos": r.get("governor_pos"), "count": r.get("learner_count"),
                      "writers": r.get("learner_writers"), "status": r.get("status")} for r in flag_rows(class_rows[s])]
                 for s in sides[1:]}
    return {
        "set": "jfleg", "sentences": n, "pseudo_writers": len(set(writer_of)), "group": JFLEG_GROUP, "words": words,
        "learner_flags": learner_flags,
        "learner_confirmed_all": sum(f["corrected"] == "all four" for f in learner_flags),
        "learner_confirmed_partly": sum(f["corrected"] == "partly" for f in learner_flags),
        "recurring": recurring_list, "recurring_flagged": sum(r["flagged"] for r in recurring_list),
        "ref_flags": ref_flags,
        "ref_flags_mean": round(sum(len(v) for v in ref_flags.values()) / 4, 2),
        "ref_false_per_10k_words": round(10000 * sum(len(v) for v in ref_flags.values())
                                         / sum(words[s] for s in sides[1:]), 2),
        "learner_instances": len(instances),
        "learner_instances_corrected_all": sum(st["all"] for st in stat.values()),
        "learner_instances_partly": sum(st["partly"] for st in stat.values()),
        "seconds": round(time.perf_counter() - t0, 1),
    }


# =========================================================================== printing


def _f(v, pct=False) -> str:
    if v is None:
        return "-"
    if pct:
        return f"{100 * v:.0f}%"
    return f"{v:g}" if isinstance(v, (int, float)) else str(v)


def print_table(rows: list[dict], jf: dict | None, pooled: dict | None) -> None:
    head = (f"{'set':<8} {'writers':>7} {'cls':>3} {'words/cls':>9} {'planted':>7} {'elig.':>5} {'flags':>6} "
            f"{'true':>5} {'false':>6} {'recall':>6} {'rec.all':>7} {'prec.':>5} {'false/10k':>9} {'time':>6}")
    print(head)
    print("-" * len(head))
    for r in rows:
        writers = r["actual_writers"] or r["size"]
        print(f"{r['set']:<8} {writers:>7} {r['classes']:>3} {r['words_per_class']:>9,} "
              f"{_f(r.get('planted_per_class')):>7} {_f(r.get('eligible_per_class')):>5} {_f(r['flags_per_class']):>6} "
              f"{_f(r['true_per_class']) if r['set'] != 'control' else '-':>5} {_f(r['false_per_class']):>6} "
              f"{_f(r.get('recall'), True):>6} {_f(r.get('recall_all'), True):>7} {_f(r.get('precision'), True):>5} "
              f"{_f(r['false_per_10k_words']):>9} {r['seconds']:>5.0f}s")
    print("(per-class means where cls > 1; recall = flagged / planted patterns with >= 3 uses by >= 2 writers;"
          " rec.all = over every planted pattern present; ratios pooled over classes)")
    if jf:
        lf = jf["learner_flags"]
        print(f"\nJFLEG ({jf['sentences']} sentences, {jf['pseudo_writers']} pseudo-writers of {jf['group']} sentences, "
              f"{jf['words']['src']:,} words; {jf['seconds']:.0f} s)")
        print(f"  learner side: {len(lf)} flags; key corrected by all four in >= 1 sentence: "
              f"{jf['learner_confirmed_all']}, partly only: {jf['learner_confirmed_partly']}, "
              f"unconfirmed: {len(lf) - jf['learner_confirmed_all'] - jf['learner_confirmed_partly']}")
        print(f"  recurring error patterns (>= 3 uses corrected by all four, >= 2 writers, >= half of uses): "
              f"{len(jf['recurring'])}, flagged {jf['recurring_flagged']}")
        print(f"  learner instances: {jf['learner_instances']}, corrected by all four: "
              f"{jf['learner_instances_corrected_all']}, partly: {jf['learner_instances_partly']}")
        print("  corrected sides (all false): " + ", ".join(f"{s} {len(v)}" for s, v in jf["ref_flags"].items())
              + f"; mean {jf['ref_flags_mean']}, {jf['ref_false_per_10k_words']} per 10,000 words")
    if pooled:
        print(f"\npooled: the {pooled['size']}-writer planted essays as {pooled['classes']} classes of "
              f"{pooled['class_size']} in one workspace: {pooled['flags_per_class']} flags per class, "
              f"{pooled['union_flags']} distinct flagged keys ({pooled['union_true']} true, {pooled['union_false']} false)"
              + (f"; one-class scan {pooled['single_class_flags']} flags, {pooled['in_both']} in both"
                 if "single_class_flags" in pooled else "") + f" ({pooled['seconds']:.0f} s)")


def print_listing(details: list[dict], jf: dict | None, n: int, n_classes: int = 2) -> None:
    for d in details:
        classes = d["classes"]
        print(f"\n{d['set']} {d['size']}: first flags in export order")
        with_flags = [c for c in classes if c["flags"]]
        if len(with_flags) < len(classes):
            print(f"  no flags in {len(classes) - len(with_flags)} of {len(classes)} class{'es' if len(classes) > 1 else ''}")
        for c in with_flags[:n_classes]:
            for f in c["flags"][:n]:
                truth = ("TRUE" if f["true"] else "false") if d["set"] != "control" else "false"
                print(f"  {c['class']:<15} {label(f['key']):<22} {f['pos']:<4} {f['count']:>4}× {f['writers']:>3} writers  "
                      f"native {f['reference']:<10} {f['status']:<10} {truth}")
        if len(classes) > 1:
            false_keys = Counter(f["key"] for c in classes for f in c["flags"] if not f["true"])
            if false_keys:
                print("  false flags over all classes: " + ", ".join(
                    f"{label(k)} ({v})" for k, v in sorted(false_keys.items(), key=lambda t: (-t[1], t[0]))[:10]))
        if d["set"] == "planted":
            missed = Counter()
            notes = {}
            for c in classes:
                for k, p in c["planted"].items():
                    if p["eligible"] and not p["flagged"]:
                        missed[k] += 1
                        notes[k] = (f"planted {p['uses']}× by {p['writers']}, tool counted {p['tool_count']}× by "
                                    f"{p['tool_writers']}: {p['status']}")
            if missed:
                print("  missed (eligible, not flagged): " + "; ".join(
                    f"{label(k)}" + (f" (in {v} class{'es' if v > 1 else ''}; last: " if len(classes) > 1 else " (")
                    + f"{notes[k]})"
                    for k, v in sorted(missed.items(), key=lambda t: (-t[1], t[0]))[:20]))
    if jf:
        print("\njfleg learner side: flags in export order")
        for f in jf["learner_flags"][:n]:
            print(f"  {label(f['key']):<22} {f['pos']:<4} {f['count']:>4}× {f['writers']:>3} writers  {f['status']:<10} "
                  f"corrected: {f['corrected']} ({f['corrected_uses']} all, {f['partly_uses']} partly of {f['uses']})")
        if jf["recurring"]:
            print("  recurring error patterns: " + "; ".join(
                f"{label(r['key'])} {r['corrected_all']}/{r['uses']} ({'flagged' if r['flagged'] else r['status']})"
                for r in jf["recurring"][:12]))
        for s, v in jf["ref_flags"].items():
            if v:
                print(f"  {s} flags: " + ", ".join(f"{label(f['key'])} ({f['count']}×)" for f in v[:n]))


# =========================================================================== main


def _git(*args: str) -> str:
    try:
        return subprocess.run(["git", *args], cwd=ROOT, capture_output=True, text=True, timeout=20).stdout.strip()
    except (OSError, subprocess.SubprocessError):
        return ""


def settings_slug(scan_args: list[str], isolated: bool) -> str:
    s = "-".join(a.lstrip("-") for a in scan_args) or "default"
    s = re.sub(r"[^A-Za-z0-9._+-]+", "_", s)
    return s[:80] + ("-isolated" if isolated else "")


def parse_args(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0], formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--sets", default="planted,control,sparse,jfleg", help="comma list of planted, control, sparse, jfleg, pooled")
    ap.add_argument("--sizes", default="12,25,120,1000", help="class sizes (writers), comma list")
    ap.add_argument("--classes", type=int, default=8, help="classes per size under 100 writers (default 8)")
    ap.add_argument("--scan-args", default="", help='extra options for every hingeword scan, e.g. "--min-count 2"')
    ap.add_argument("--reference", action="append", default=[], help="reference for every scan (repeatable)")
    ap.add_argument("--processes", type=int, default=None, help="parser processes per scan")
    ap.add_argument("--isolated", action="store_true", help="one workspace per class instead of one per size")
    ap.add_argument("--fresh", action="store_true", help="delete build/bench-detection first")
    ap.add_argument("--list", type=int, default=8, help="flags listed per class (default 8)")
    ap.add_argument("--data", type=Path, default=Path(os.environ.get("HINGEWORD_SHARED_DATA", ROOT.parent / "shared" / "data")),
                    help="shared data folder (default ../shared/data)")
    ap.add_argument("--hingeword", default=None, help="command that runs hingeword (default: the one beside this Python)")
    ap.add_argument("--tool-src", type=Path, default=None,
                    help="run the tool from this src/ folder (PYTHONPATH of the scans only), e.g. a snapshot of HEAD")
    args = ap.parse_args(argv)
    args.sets = [s.strip() for s in args.sets.split(",") if s.strip()]
    bad = set(args.sets) - {"planted", "control", "sparse", "jfleg", "pooled"}
    if bad:
        ap.error(f"unknown set(s): {', '.join(sorted(bad))}")
    try:
        args.sizes = sorted({int(s) for s in args.sizes.split(",") if s.strip()})
    except ValueError:
        ap.error("--sizes takes whole numbers, e.g. 12,25,120,1000")
    if any(s < 2 for s in args.sizes):
        ap.error("--sizes must be at least 2")
    return args


def main(argv=None) -> int:
    args = parse_args(argv)
    if not args.data.is_dir():
        print(f"bench_detection: shared data not found at {args.data}; nothing to measure (skipped).")
        return 0
    if args.fresh and BUILD.exists():
        say(f"--fresh: deleting {BUILD}")
        shutil.rmtree(BUILD)
    BUILD.mkdir(parents=True, exist_ok=True)
    scan_extra = shlex.split(args.scan_args)
    for r in args.reference:
        scan_extra += ["--reference", r]
    if args.processes:
        scan_extra += ["--processes", str(args.processes)]
    try:
        tool = Tool(shlex.split(args.hingeword) if args.hingeword else default_tool_cmd(), scan_extra, BUILD / "logs",
                    args.tool_src)
    except BenchError as exc:
        print(f"bench_detection: {exc}", file=sys.stderr)
        return 1
    started = time.perf_counter()
    rows, details, jf, pooled = [], [], None, None
    try:
        sized = [s for s in ("planted", "control", "sparse") if s in args.sets]
        if sized or "pooled" in args.sets:
            try:
                data = build_essays(args.data, args.sizes, args.classes)
            except sources_mod.NoSources as exc:
                say(f"[planted/control] skipped: {exc}")
                data = None
            if data is not None:
                for which in sized:
                    r, d = run_sized_sets(args, tool, data, which)
                    rows += r
                    details += d
                if "pooled" in args.sets:
                    big = max((s for s in args.sizes if s >= 100), default=None)
                    single = next((d["classes"][0] for d in details if d["set"] == "planted" and d["size"] == big), None)
                    pooled = run_pooled(args, tool, data, single)
        if "jfleg" in args.sets:
            jf = run_jfleg(args, tool, args.data)
    except BenchError as exc:
        print(f"bench_detection: {exc}", file=sys.stderr)
        return 1
    # interleave planted and control rows by size for the table
    order = {"planted": 0, "control": 1, "sparse": 2}
    rows.sort(key=lambda r: (r["size"], order.get(r["set"], 2)))
    print(f"hingeword detection benchmark · {tool.version} · {tool.first_line.split('·', 1)[-1].strip() if tool.first_line else ''}")
    print(f"scan options: {shlex.join(scan_extra) or '(defaults)'} · {'one workspace per class' if args.isolated else 'one workspace per size'}"
          f" · total {time.perf_counter() - started:.0f} s\n")
    print_table(rows, jf, pooled)
    print_listing(details, jf, args.list)
    meta = {
        "date": _dt.datetime.now().isoformat(timespec="seconds"), "tool": tool.version, "scan_line": tool.first_line,
        "git_head": _git("rev-parse", "HEAD"), "src_modified_files": len(_git("status", "--porcelain", "src").splitlines()),
        "tool_src": str(args.tool_src or ""),
        "scan_args": scan_extra, "isolated": args.isolated, "sizes": args.sizes, "classes": args.classes,
        "sets": args.sets, "seconds": round(time.perf_counter() - started, 1),
    }
    result = {"meta": meta, "table": rows, "details": details, "jfleg": jf, "pooled": pooled}
    text = json.dumps(result, indent=1, ensure_ascii=False, default=sorted) + "\n"
    (BUILD / "results.json").write_text(text, encoding="utf-8")
    slug_args = shlex.split(args.scan_args) + [a for r in args.reference for a in ("--reference", r)]
    slug_path = BUILD / f"results-{settings_slug(slug_args, args.isolated)}.json"
    slug_path.write_text(text, encoding="utf-8")
    say(f"figures written to {BUILD / 'results.json'} and {slug_path}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
