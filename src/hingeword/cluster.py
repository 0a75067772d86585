"""Reference builds on a Dask cluster (``hingeword reference build SOURCE --cluster ADDRESS``).

Counting patterns is a map over documents and a sum of counts, so it spreads over the
workers of a `Dask distributed <https://distributed.dask.org>`_ cluster (an optional
extra: ``pip install "hingeword[cluster]"``):

* the client (the machine that runs ``hingeword``) cuts the input files, in their
  sorted order, into shards of whole files of about ``shard_bytes``
  (:func:`plan_shards`), reads each shard and sends its text with the task, so the
  workers need no access to the source folder;
* a worker counts a shard with :func:`hingeword.reference.count_shard`, the function
  the single-process build uses file by file, and returns the shard's counts; it
  loads the spaCy pipeline once per worker process (:func:`hingeword.parse.load_model`
  keeps it for the process);
* the client adds the counts as shards come back (integer sums: the order does not
  matter), checkpoints and writes the reference exactly as the single-process build
  does (:func:`hingeword.reference.build`), so the files are the same byte for byte.

Failures: a shard whose task raises is run again (``retries``); a shard on a worker
that dies or is lost is given to another worker by the scheduler (up to Dask's
``distributed.scheduler.allowed-failures`` deaths). Each shard's counts are added once,
when its result arrives. A data error (a malformed CoNLL-U line) or a missing model is
returned by the worker rather than raised, so it is reported once, not retried.

``ADDRESS`` is ``local:N`` (a :class:`distributed.LocalCluster` of N worker processes
with one thread each, listening on the loopback interface only) or the address of a
scheduler started with Dask's own tools (``dask scheduler``; ``dask worker
tcp://HOST:8786`` on each machine; see the README).
"""

from __future__ import annotations

import logging
import os
import re
import socket
import uuid
from collections.abc import Iterator, Sequence
from concurrent.futures import CancelledError
from pathlib import Path

from . import reference
from .errors import ClusterError, HingewordError
from .reference import GOLD_MODEL, Counts, read_source_file

log = logging.getLogger("hingeword")

#: Times a shard whose task raised is run again.
RETRIES = 2
#: Shards in flight per worker thread: one being counted, one waiting.
_IN_FLIGHT_PER_THREAD = 2
_LOCAL = re.compile(r"local(?::(\d+))?")


def _distributed():
    try:
        import distributed
    except ImportError:
        raise ClusterError('a cluster build needs Dask: pip install "hingeword[cluster]"') from None
    return distributed


def parse_address(address: str) -> tuple[str, int | None]:
    """``("local", N)`` for ``local:N`` (``local`` alone: one worker per core), else ``(address, None)``."""
    m = _LOCAL.fullmatch(address.strip())
    if m:
        n = int(m.group(1)) if m.group(1) else max(1, os.cpu_count() or 1)
        if n < 1:
            raise ClusterError(f"'{address}': a local cluster needs at least one worker (local:1, local:2, …)")
        return "local", n
    if not address.strip() or address.strip().startswith("local"):
        raise ClusterError(f"'{address}' is not a cluster address: use local:N or tcp://HOST:8786")
    return address.strip(), None


def plan_shards(sizes: Sequence[int], target: int) -> list[range]:
    """Consecutive groups of files, each closed once it holds ``target`` bytes (a file is never split)."""
    shards: list[range] = []
    start = size = 0
    for i, n in enumerate(sizes):
        size += n
        if size >= target:
            shards.append(range(start, i + 1))
            start, size = i + 1, 0
    if start < len(sizes):
        shards.append(range(start, len(sizes)))
    return shards


# ------------------------------------------------------------------- on the workers


def _worker_model(fmt: str, model: str | None) -> dict | str:
    """Runs on each worker: load the pipeline (once per process) and describe it, or say why not."""
    if fmt != "text":
        return dict(GOLD_MODEL)
    try:
        from .parse import load_model

        _, info = load_model(model)
    except HingewordError as exc:
        return f"{socket.gethostname()}: {exc}"
    return {"model": info.name, "model_version": info.version}


def _count_shard_task(docs: list[tuple[str, str]], fmt: str, model: str | None):
    """Runs on a worker: count one shard. Returns ``(Counts, model description, host)``, or the
    :class:`HingewordError` to report (returned, not raised: bad data is not retried)."""
    try:
        if fmt == "text":
            from .parse import load_model

            nlp, info = load_model(model)
            desc = {"model": info.name, "model_version": info.version}
        else:
            nlp, desc = None, dict(GOLD_MODEL)
        return reference.count_shard(docs, fmt, nlp), desc, socket.gethostname()
    except HingewordError as exc:
        return exc


# --------------------------------------------------------------------- on the client


class ClusterCounter:
    """A connection to a Dask cluster (or a local one it starts) that counts shards.

    Use as a context manager: leaving it closes the client and stops a local cluster.

    :param timeout: seconds to wait for the scheduler and for a first worker.
    """

    def __init__(self, address: str, *, timeout: float = 30, retries: int = RETRIES):
        distributed = _distributed()
        self.address = address
        self.retries = retries
        self._local = None
        where, n_workers = parse_address(address)
        try:
            if where == "local":
                self._local = distributed.LocalCluster(
                    n_workers=n_workers, threads_per_worker=1, processes=True, host="127.0.0.1",
                    # the scheduler's web page too on the loopback interface, on a free port
                    dashboard_address="127.0.0.1:0", silence_logs=logging.WARNING,
                )
                self.client = distributed.Client(self._local, timeout=timeout)
            else:
                self.client = distributed.Client(where, timeout=timeout)
        except (OSError, TimeoutError, ValueError) as exc:
            self.close()
            raise ClusterError(f"cannot start or reach a Dask cluster at {address}: {_first_line(exc)}") from None
        try:
            self.client.wait_for_workers(1, timeout=timeout)
        except (OSError, TimeoutError) as exc:
            self.close()
            raise ClusterError(f"no Dask worker joined the scheduler at {address} within {timeout:g} s "
                               f"(start one with: dask worker {address}): {_first_line(exc)}") from None
        log.info("cluster %s: %d workers", address, len(self.client.nthreads()))

    def __enter__(self) -> ClusterCounter:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def close(self) -> None:
        client, self.client = getattr(self, "client", None), None
        if client is not None:
            client.close()
        local, self._local = self._local, None
        if local is not None:
            local.close()

    def threads(self) -> int:
        return max(1, sum(self.client.nthreads().values()))

    def model_desc(self, fmt: str, model: str | None) -> dict:
        """The pipeline every worker parses with (loaded there now); an error when they differ."""
        if fmt != "text":
            return dict(GOLD_MODEL)
        answers = self.client.run(_worker_model, fmt, model)
        problems = sorted(a for a in answers.values() if isinstance(a, str))
        if problems:
            raise ClusterError(f"a worker cannot parse: {problems[0]}")
        found = {(a["model"], a["model_version"]) for a in answers.values()}
        if len(found) > 1:
            raise ClusterError("the workers have different spaCy pipelines ("
                               + ", ".join(f"{m} {v}" for m, v in sorted(found))
                               + "): install the same one on every machine")
        return next(iter(answers.values()))

    def count(self, files: Sequence[Path], fmt: str, model: str | None, *, expected: dict,
              shard_bytes: int = 256_000) -> Iterator[tuple[list[str], Counts, tuple[int, int]]]:
        """Count ``files`` on the workers; yield ``(file names, Counts, (shards done, shards total))``
        per shard as it comes back. ``expected`` is :meth:`model_desc`: a shard counted with
        another pipeline (a worker that joined later) stops the build."""
        if not files:
            return
        distributed = _distributed()
        sizes = [f.stat().st_size for f in files]
        # at least four shards per worker thread, so that the last ones do not leave workers idle
        target = max(1, min(shard_bytes, sum(sizes) // (4 * self.threads())))
        shards = plan_shards(sizes, target)
        queue = iter(enumerate(shards))
        token = uuid.uuid4().hex[:8]
        running = distributed.as_completed()
        members: dict[str, list[Path]] = {}
        futures: dict[str, object] = {}

        def submit(limit: int) -> None:
            while len(futures) < limit:
                item = next(queue, None)
                if item is None:
                    return
                i, span = item
                paths = [files[k] for k in span]
                docs = [(str(p), read_source_file(p, fmt)) for p in paths]
                fut = self.client.submit(_count_shard_task, docs, fmt, model, key=f"hingeword-shard-{token}-{i}",
                                         retries=self.retries, pure=False)
                members[fut.key], futures[fut.key] = paths, fut
                running.add(fut)

        submit(_IN_FLIGHT_PER_THREAD * self.threads())
        done = 0
        try:
            for fut in running:
                paths = members.pop(fut.key)
                futures.pop(fut.key)
                try:
                    result = fut.result()
                except (distributed.KilledWorker, CancelledError, OSError, TimeoutError) as exc:
                    raise ClusterError(
                        f"the shard of {len(paths)} file{'s' if len(paths) > 1 else ''} starting with "
                        f"{paths[0].name} could not be counted "
                        f"({type(exc).__name__}: {_first_line(exc)}); run the build again to resume "
                        "from its last checkpoint") from None
                fut.release()
                if isinstance(result, HingewordError):
                    raise result
                counts, desc, host = result
                if desc != expected:
                    raise ClusterError(f"worker {host} parsed with {desc['model']} {desc['model_version']}, the others "
                                       f"with {expected['model']} {expected['model_version']}: install the same "
                                       "pipeline on every machine")
                done += 1
                submit(_IN_FLIGHT_PER_THREAD * self.threads())
                yield [str(p) for p in paths], counts, (done, len(shards))
        finally:
            for fut in futures.values():
                fut.cancel()


def _first_line(exc: BaseException) -> str:
    text = str(exc).strip()
    return text.splitlines()[0] if text else type(exc).__name__
