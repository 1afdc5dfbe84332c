"""Where many runs execute: this process, a local process pool, or a Dask cluster.

:class:`Engine` maps a function over items and returns the results in the
order of the items, whichever way they ran. With a scheduler address the
items go to a Dask distributed cluster (the optional ``groundcalc[cluster]``
extra), one task per item, each retried if its worker dies. Workers need the
package only: every item carries what its run needs (a design, or the bytes
of a workbook), so no shared file system is assumed.

Progress goes to stderr: a tqdm bar when stderr is a terminal, plain lines
through :mod:`logging` otherwise, and nothing when the ``groundcalc`` logger
is quiet (``--quiet``).
"""

from __future__ import annotations

import logging
import os
import tempfile
import uuid
from collections.abc import Callable, Sequence
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import InputError
from ..progress import Progress

__all__ = ["Engine", "Progress", "run_parallel", "summarise_bytes", "workbook_item"]

log = logging.getLogger("groundcalc.studies")

#: Environment variables that limit each worker's linear-algebra threads (one process per core).
_THREAD_VARS = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")
#: Times a Dask task is retried after its worker died.
RETRIES = 3


@dataclass
class Engine:
    """Runs many independent items.

    Attributes
    ----------
    jobs : int
        Local worker processes (1 = in this process).
    scheduler : str or None
        Address of a Dask distributed scheduler (e.g. ``tcp://10.0.0.5:8786``),
        or ``None`` for local runs.
    client : object, optional
        An already connected ``distributed.Client`` (used instead of ``scheduler``).
    timeout_s : float
        How long to wait for the scheduler to answer. [s]
    """

    jobs: int = 1
    scheduler: str | None = None
    client: Any = None
    timeout_s: float = 20.0

    @property
    def distributed(self) -> bool:
        """True when the items go to a Dask cluster."""
        return self.client is not None or self.scheduler is not None

    def describe(self, items: int) -> str:
        """Where the items run, in words."""
        if self.distributed:
            return f"{items} task(s) on the Dask cluster at {self.scheduler or 'the connected client'}"
        return f"{items} run(s) in {min(self.jobs, max(items, 1))} local worker process(es)"

    def map(
        self,
        fn: Callable[[Any], Any],
        items: Sequence[Any],
        stage: str,
        on_result: Callable[[int, Any], None] | None = None,
    ) -> list[Any]:
        """``[fn(item) for item in items]``, run locally or on the cluster, with progress.

        Parameters
        ----------
        fn : callable
            A module-level function of the package (it is sent by reference).
        items : sequence
            Its arguments, one per run.
        stage : str
            Name of the stage for the progress bar.
        on_result : callable, optional
            Called as ``on_result(index, result)`` as each result arrives.
        """
        items = list(items)
        if not items:
            return []
        with Progress(stage, len(items)) as progress:
            if self.distributed:
                return self._map_dask(fn, items, stage, progress, on_result)
            if self.jobs <= 1 or len(items) == 1:
                out = []
                for k, it in enumerate(items):
                    out.append(fn(it))
                    progress.update()
                    if on_result is not None:
                        on_result(k, out[-1])
                return out
            return self._map_pool(fn, items, progress, on_result)

    def _map_pool(self, fn, items, progress, on_result) -> list[Any]:
        import multiprocessing

        saved = {k: os.environ.get(k) for k in _THREAD_VARS}
        os.environ.update({k: "1" for k in _THREAD_VARS})
        out: list[Any] = [None] * len(items)
        try:
            ctx = multiprocessing.get_context("spawn")
            with ProcessPoolExecutor(max_workers=min(self.jobs, len(items)), mp_context=ctx) as pool:
                futures = {pool.submit(fn, it): k for k, it in enumerate(items)}
                for fut in as_completed(futures):
                    k = futures[fut]
                    out[k] = fut.result()
                    progress.update()
                    if on_result is not None:
                        on_result(k, out[k])
        finally:
            for k, v in saved.items():
                if v is None:
                    os.environ.pop(k, None)
                else:
                    os.environ[k] = v
        return out

    def _map_dask(self, fn, items, stage, progress, on_result) -> list[Any]:
        try:
            from distributed import Client
            from distributed import as_completed as dask_completed
        except ImportError:
            raise InputError(
                "--scheduler needs the Dask distributed packages, which are not installed",
                fix="Install them with: pip install 'groundcalc[cluster]' (on this machine and on every worker)",
            ) from None
        own = self.client is None
        try:
            client = self.client or Client(self.scheduler, timeout=f"{self.timeout_s}s")
        except OSError as exc:
            raise InputError(
                f"no Dask scheduler answers at '{self.scheduler}' ({exc})",
                fix="Start one with 'dask scheduler' and workers with 'dask worker ADDRESS', then give that address",
            ) from None
        try:
            tag = uuid.uuid4().hex[:8]
            keys = [f"groundcalc-{stage.replace(' ', '-')}-{tag}-{k}" for k in range(len(items))]
            futures = client.map(fn, items, key=keys, pure=False, retries=RETRIES)
            index = {f.key: k for k, f in enumerate(futures)}
            out: list[Any] = [None] * len(items)
            for fut in dask_completed(futures):
                k = index[fut.key]
                out[k] = fut.result()
                progress.update()
                if on_result is not None:
                    on_result(k, out[k])
            return out
        finally:
            if own:
                client.close()


def workbook_item(path: str | Path) -> tuple[str, str, bytes | None]:
    """``(name, source, bytes)`` of a workbook for :func:`summarise_bytes` (``None`` bytes if unreadable)."""
    p = Path(path)
    try:
        data = p.read_bytes() if p.is_file() else None
    except OSError:
        data = None
    return p.stem, str(path), data


def summarise_bytes(item: tuple[str, str, bytes | None]):
    """Analyse a workbook sent as bytes (a worker needs no access to the file).

    The bytes are written to a private temporary file on the worker, read
    and analysed as :func:`groundcalc.studies.compare.summarise_file` would.
    """
    from .compare import summarise_file

    name, source, data = item
    if data is None:
        s = summarise_file(source)  # gives the reader's message for a missing file or a folder
        s.name = name
        return s
    with tempfile.TemporaryDirectory(prefix="groundcalc-") as tmp:
        p = Path(tmp) / (Path(source).name or "design.xlsx")
        p.write_bytes(data)
        s = summarise_file(str(p))
    s.name, s.source = name, source
    return s


def run_parallel(fn: Callable[[Any], Any], items: Sequence[Any], jobs: int) -> list[Any]:
    """Apply ``fn`` to every item in ``jobs`` local worker processes (in order; ``jobs = 1``: in this process).

    The same local pool as every study uses (:class:`Engine`): workers
    are started fresh ("spawn") with one linear-algebra thread each, so ``jobs`` processes use
    ``jobs`` cores and nothing inherited from this process can deadlock them.
    """
    return Engine(jobs=jobs).map(fn, items, "designs")
