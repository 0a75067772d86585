"""Reference builds on a Dask cluster (hingeword.cluster): the same files as the build
without a cluster, shards retried without being counted twice, resumable.

The cluster tests share one ``LocalCluster`` (a scheduler and 2 worker processes with
one thread each, on the loopback interface only) and build from the invented test data
of conftest.py. The tests that parse text load the spaCy pipeline on the workers and are
marked ``slow``.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import sys
from collections import Counter
from pathlib import Path

import pytest
from distributed import WorkerPlugin
from typer.testing import CliRunner

from conftest import BUILD_DATE, CONLLU_DIR, NATIVE_DIR
from hingeword import reference
from hingeword.cli import app
from hingeword.cluster import ClusterCounter, parse_address, plan_shards
from hingeword.errors import ClusterError, ReferenceDataError

ARTEFACTS = ("manifest.json", "patterns.tsv.gz", "lemmas.tsv.gz")
#: Seconds any wait on the cluster may take before the test fails.
TIMEOUT = 60
runner = CliRunner()


def _bytes(path: Path) -> dict[str, bytes]:
    return {name: (path / name).read_bytes() for name in ARTEFACTS}


def _split_conllu(folder: Path) -> Path:
    """tiny.conllu cut into one file per sentence pair (5 files)."""
    blocks = (CONLLU_DIR / "tiny.conllu").read_text(encoding="utf-8").strip().split("\n\n")
    folder.mkdir()
    for i in range(0, len(blocks), 2):
        (folder / f"part{i // 2}.conllu").write_text("\n\n".join(blocks[i:i + 2]) + "\n\n", encoding="utf-8")
    return folder


@pytest.fixture(scope="module")
def split(tmp_path_factory) -> tuple[Path, Path]:
    """``(folder of 5 CoNLL-U files, its reference built without a cluster)``."""
    base = tmp_path_factory.mktemp("split")
    src = _split_conllu(base / "src")
    return src, reference.build(src, base / "whole", name="tiny", fmt="conllu", build_date=BUILD_DATE)


@pytest.fixture(scope="module")
def dask_cluster():
    """A scheduler and two single-threaded worker processes on 127.0.0.1, closed after the module."""
    from distributed import Client, LocalCluster

    cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                           dashboard_address="127.0.0.1:0")
    client = Client(cluster, timeout=TIMEOUT)
    try:
        client.wait_for_workers(2, timeout=TIMEOUT)
        yield cluster.scheduler_address, client
    finally:
        client.close(timeout=TIMEOUT)
        cluster.close(timeout=TIMEOUT)


class _Stop:
    """Progress callback that records calls and interrupts after ``stop_after`` files."""

    def __init__(self, stop_after: int | None = None):
        self.stop_after = stop_after
        self.calls: list[reference.BuildProgress] = []

    def __call__(self, p: reference.BuildProgress) -> None:
        self.calls.append(p)
        if self.stop_after is not None and p.files_done > self.stop_after:
            raise KeyboardInterrupt


# ------------------------------------------------------------------ without a cluster


@pytest.mark.parametrize("sizes, target, shards", [
    ([5, 5, 5, 5], 10, [[0, 1], [2, 3]]),
    ([5, 5, 5], 10, [[0, 1], [2]]),
    ([30, 1, 1], 10, [[0], [1, 2]]),  # a big file is one shard, never split
    ([1, 1, 1], 1, [[0], [1], [2]]),
    ([0, 0], 10, [[0, 1]]),  # empty files still belong to a shard
    ([], 10, []),
])
def test_cluster_plan_shards_keeps_files_whole_and_in_order(sizes, target, shards):
    plan = plan_shards(sizes, target)
    assert [list(r) for r in plan] == shards
    assert [i for r in plan for i in r] == list(range(len(sizes)))  # every file once, in order


def test_cluster_parse_address():
    assert parse_address("local:3") == ("local", 3)
    assert parse_address("local")[0] == "local" and parse_address("local")[1] >= 1
    assert parse_address("tcp://10.0.0.5:8786") == ("tcp://10.0.0.5:8786", None)
    for bad in ("local:0", "local:two", "", "local:"):
        with pytest.raises(ClusterError, match="local"):
            parse_address(bad)


def test_reference_counts_summed_in_any_order_give_the_same_files(split, tmp_path):
    """What makes a cluster build deterministic: shards' counts added in any order save the same files."""
    src, whole = split
    files = sorted(src.glob("*.conllu"))
    per_file = [c for _, c in reference.count_documents(((str(f), f.read_text(encoding="utf-8")) for f in files),
                                                        "conllu")]
    manifest = reference.read_manifest(whole)
    keep = {k: manifest[k] for k in ("name", "source", "licence", "limits", "format", "model", "model_version",
                                     "extractor_version", "build_date")}
    for k, order in enumerate([(0, 1, 2, 3, 4), (4, 3, 2, 1, 0), (2, 0, 4, 1, 3)]):
        total = reference.Counts()
        for i in order:
            total.add(per_file[i])
        path = reference.save(reference.Reference(manifest={**keep, **total.totals()}, patterns=total.patterns,
                                                  lemmas=total.lemmas), tmp_path / f"order{k}")
        assert _bytes(path) == _bytes(whole)


def test_cluster_without_dask_is_a_one_line_error(monkeypatch, tmp_path):
    monkeypatch.setitem(sys.modules, "distributed", None)  # as if the extra were not installed
    with pytest.raises(ClusterError, match=r'^a cluster build needs Dask: pip install "hingeword\[cluster\]"$'):
        reference.build(CONLLU_DIR, tmp_path / "gold", name="gold", fmt="conllu", cluster="local:2")
    result = runner.invoke(app, ["reference", "build", str(CONLLU_DIR), "--name", "gold", "--format", "conllu",
                                 "-o", str(tmp_path / "gold"), "--cluster", "local:2", "-q"])
    assert result.exit_code == 1
    assert result.output.strip() == 'Error: a cluster build needs Dask: pip install "hingeword[cluster]"'
    assert not (tmp_path / "gold").exists()


def test_cluster_and_processes_together_are_refused(tmp_path):
    with pytest.raises(ReferenceDataError, match="leave out processes"):
        reference.build(CONLLU_DIR, tmp_path / "gold", name="gold", fmt="conllu", cluster="local:2", processes=2)


# ------------------------------------------------------------------ on a local cluster


@pytest.mark.slow
def test_cluster_text_build_equals_single_process_build(dask_cluster, tiny_ref_path, tmp_path):
    address, _ = dask_cluster
    progress = _Stop()
    path = reference.build(NATIVE_DIR, tmp_path / "tiny", name="tiny", build_date=BUILD_DATE, cluster=address,
                           shard_bytes=1, progress=progress)
    # the same files, byte for byte: counts, lemma counts and manifest (which has no timing field)
    assert _bytes(path) == _bytes(tiny_ref_path)
    assert json.loads((path / "manifest.json").read_text()) == reference.read_manifest(tiny_ref_path)
    # one file a shard here; progress counts shards done out of the total
    assert [(p.shards_done, p.shards_total) for p in progress.calls] == [(1, 4), (2, 4), (3, 4), (4, 4)]
    assert [p.files_done for p in progress.calls] == [1, 2, 3, 4]
    assert not (tmp_path / "tiny.partial").exists()


def test_cluster_conllu_build_equals_single_process_build(dask_cluster, split, tmp_path):
    address, _ = dask_cluster
    src, whole = split
    for shard_bytes in (1, 10**9):  # five shards; one shard of everything
        path = reference.build(src, tmp_path / f"gold{shard_bytes}", name="tiny", fmt="conllu", build_date=BUILD_DATE,
                               cluster=address, shard_bytes=shard_bytes)
        assert _bytes(path) == _bytes(whole)


def test_cluster_build_resumes_after_interrupt(dask_cluster, split, tmp_path):
    address, _ = dask_cluster
    src, whole = split
    out = tmp_path / "tiny"
    first = _Stop(stop_after=2)
    with pytest.raises(KeyboardInterrupt):
        reference.build(src, out, name="tiny", fmt="conllu", build_date=BUILD_DATE, cluster=address, shard_bytes=1,
                        checkpoint_every=1, checkpoint_seconds=0, progress=first)
    state = json.loads((tmp_path / "tiny.partial" / "state.json").read_text(encoding="utf-8"))
    assert len(state["done"]) == 2 and not out.exists()

    second = _Stop()
    path = reference.build(src, out, name="tiny", fmt="conllu", build_date=BUILD_DATE, cluster=address, shard_bytes=1,
                           checkpoint_every=1, checkpoint_seconds=0, progress=second)
    # only the three files not yet saved were sent again, and nothing was counted twice
    assert [(p.files_done, p.shards_done, p.shards_total) for p in second.calls] == [(3, 1, 3), (4, 2, 3), (5, 3, 3)]
    assert _bytes(path) == _bytes(whole)
    assert not (tmp_path / "tiny.partial").exists()


def test_cluster_checkpoints_at_most_every_checkpoint_seconds(dask_cluster, split, tmp_path):
    """Shards come back fast from many workers: saving all counts after each would hold the client up."""
    address, _ = dask_cluster
    src, _ = split
    with pytest.raises(KeyboardInterrupt):
        reference.build(src, tmp_path / "tiny", name="tiny", fmt="conllu", cluster=address, shard_bytes=1,
                        checkpoint_every=1, checkpoint_seconds=3600, progress=_Stop(stop_after=3))
    assert not (tmp_path / "tiny.partial").exists()  # four shards summed within the hour: none saved yet


def test_cluster_and_single_process_builds_resume_each_other(dask_cluster, split, tmp_path):
    address, _ = dask_cluster
    src, whole = split
    out = tmp_path / "tiny"
    with pytest.raises(KeyboardInterrupt):  # interrupted on the cluster ...
        reference.build(src, out, name="tiny", fmt="conllu", build_date=BUILD_DATE, cluster=address, shard_bytes=1,
                        checkpoint_every=1, checkpoint_seconds=0, progress=_Stop(stop_after=1))
    with pytest.raises(KeyboardInterrupt):  # ... continued here and interrupted again ...
        reference.build(src, out, name="tiny", fmt="conllu", build_date=BUILD_DATE, checkpoint_every=1,
                        progress=_Stop(stop_after=3))
    last = _Stop()  # ... and finished on the cluster
    path = reference.build(src, out, name="tiny", fmt="conllu", build_date=BUILD_DATE, cluster=address,
                           shard_bytes=1, checkpoint_every=1, checkpoint_seconds=0, progress=last)
    assert [p.files_done for p in last.calls] == [4, 5]
    assert _bytes(path) == _bytes(whole)


class _KillOnce(WorkerPlugin):
    """Worker plugin: the first worker to start a shard dies on the spot (a lost machine)."""

    name = "hingeword-test-kill-once"

    def __init__(self, marker: str):
        self.marker = marker

    def transition(self, key, start, finish, **kwargs):
        if finish == "executing" and str(key).startswith("hingeword-shard-"):
            try:
                os.close(os.open(self.marker, os.O_CREAT | os.O_EXCL))
            except FileExistsError:
                return
            os._exit(1)


class _FailOnce(WorkerPlugin):
    """Worker plugin: the first shard counted on any worker raises OSError (a passing fault)."""

    name = "hingeword-test-fail-once"

    def __init__(self, marker: str):
        self.marker = marker

    def setup(self, worker):
        import hingeword.reference as ref

        self.original = original = ref.count_documents
        marker = self.marker

        def failing(*args, **kwargs):
            try:
                os.close(os.open(marker, os.O_CREAT | os.O_EXCL))
            except FileExistsError:
                return original(*args, **kwargs)
            raise OSError("simulated failure while counting a shard")

        ref.count_documents = failing

    def teardown(self, worker):
        import hingeword.reference as ref

        ref.count_documents = self.original


@pytest.mark.parametrize("plugin", [_KillOnce, _FailOnce], ids=["lost-worker", "failing-task"])
def test_cluster_failed_shard_is_retried_and_counted_once(dask_cluster, split, tmp_path, plugin):
    address, client = dask_cluster
    src, whole = split
    marker = tmp_path / "failed-once"
    client.register_plugin(plugin(str(marker)), name=plugin.name)
    try:
        path = reference.build(src, tmp_path / "tiny", name="tiny", fmt="conllu", build_date=BUILD_DATE,
                               cluster=address, shard_bytes=1)
    finally:
        client.unregister_worker_plugin(plugin.name)
        client.wait_for_workers(2, timeout=TIMEOUT)  # the nanny restarts a killed worker
    assert marker.exists()  # the fault did happen
    assert _bytes(path) == _bytes(whole)
    assert Counter(reference.load(path).patterns) == Counter(reference.load(whole).patterns)


class _FailAlways(WorkerPlugin):
    """Worker plugin: every shard raises OSError (a fault that retrying does not cure)."""

    name = "hingeword-test-fail-always"

    def setup(self, worker):
        import hingeword.reference as ref

        self.original = ref.count_documents

        def failing(*args, **kwargs):
            raise OSError("simulated lasting failure")

        ref.count_documents = failing

    def teardown(self, worker):
        import hingeword.reference as ref

        ref.count_documents = self.original


def test_cluster_shard_failing_after_retries_is_a_one_line_error(dask_cluster, split, tmp_path):
    address, client = dask_cluster
    src, _ = split
    client.register_plugin(_FailAlways(), name=_FailAlways.name)
    try:
        with pytest.raises(ClusterError) as exc:
            reference.build(src, tmp_path / "tiny", name="tiny", fmt="conllu", cluster=address, shard_bytes=1)
    finally:
        client.unregister_worker_plugin(_FailAlways.name)
    assert re.fullmatch(r"the shard of 1 file starting with part\d\.conllu could not be counted \(OSError: "
                        r"simulated lasting failure\); run the build again to resume from its last checkpoint",
                        str(exc.value))
    assert not (tmp_path / "tiny").exists()


def test_cluster_bad_conllu_is_the_same_one_line_error(dask_cluster, tmp_path):
    address, _ = dask_cluster
    src = tmp_path / "src"
    src.mkdir()
    shutil.copy(CONLLU_DIR / "tiny.conllu", src / "a.conllu")
    (src / "bad.conllu").write_text("# text = We waited.\n1\tWe\twe\tPRON\n", encoding="utf-8")
    with pytest.raises(ReferenceDataError) as exc:
        reference.build(src, tmp_path / "out", name="bad", fmt="conllu", cluster=address, shard_bytes=1)
    assert str(exc.value) == f"{src / 'bad.conllu'}:2: not a CoNLL-U line (expected 10 tab-separated columns)"
    assert not (tmp_path / "out").exists()


def test_cli_reference_build_on_a_cluster(dask_cluster, split, tmp_path):
    address, _ = dask_cluster
    src, whole = split
    result = runner.invoke(app, ["reference", "build", str(src), "--name", "tiny", "--format", "conllu",
                                 "-o", str(tmp_path / "tiny"), "--build-date", BUILD_DATE, "--cluster", address, "-q"])
    assert result.exit_code == 0, result.output
    assert result.output.startswith(f"built tiny at {tmp_path / 'tiny'}: 5 files, 61 words, 10 attachments")
    built, single = _bytes(tmp_path / "tiny"), _bytes(whole)
    assert built["patterns.tsv.gz"] == single["patterns.tsv.gz"] and built["lemmas.tsv.gz"] == single["lemmas.tsv.gz"]
    assert reference.read_manifest(tmp_path / "tiny")["licence"] == "not stated"  # the CLI's default


def test_cli_reference_build_starts_a_local_cluster(split, tmp_path):
    src, whole = split
    result = runner.invoke(app, ["reference", "build", str(src), "--name", "tiny", "--format", "conllu",
                                 "-o", str(tmp_path / "tiny"), "--build-date", BUILD_DATE, "--cluster", "local:1", "-q"])
    assert result.exit_code == 0, result.output
    assert (tmp_path / "tiny" / "patterns.tsv.gz").read_bytes() == (whole / "patterns.tsv.gz").read_bytes()


def test_cluster_unreachable_scheduler_is_a_one_line_error():
    import socket

    with socket.socket() as s:  # a loopback port nobody listens on
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    with pytest.raises(ClusterError) as exc:
        ClusterCounter(f"tcp://127.0.0.1:{port}", timeout=2)
    assert str(exc.value).startswith(f"cannot start or reach a Dask cluster at tcp://127.0.0.1:{port}: ")
    assert "\n" not in str(exc.value)
