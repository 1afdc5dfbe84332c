"""Progress of long stages on stderr: a tqdm bar on a terminal, plain log lines otherwise.

Nothing is shown when the ``groundcalc`` logger is quiet (``--quiet``). Used by the studies
(compare, sweep, uncertainty) for their runs and by large solves for their row blocks.
"""

from __future__ import annotations

import logging
import math
import sys
import time

__all__ = ["Progress"]

log = logging.getLogger("groundcalc.progress")


class Progress:
    """Progress of one stage: a tqdm bar on a terminal, plain lines otherwise, nothing when quiet.

    Parameters
    ----------
    stage : str
        What is being done, e.g. ``"soil samples"``.
    total : int
        Number of items.
    unit : str
        What an item is, for the bar (``"run"``, ``"block"``).
    """

    #: Plain lines: at most one per this many seconds (and the last).
    INTERVAL_S = 5.0

    def __init__(self, stage: str, total: int, stream=None, unit: str = "run"):
        self.stage, self.total, self.done = stage, total, 0
        self.stream = stream if stream is not None else sys.stderr
        self.t0 = self._last = time.perf_counter()
        self.bar = None
        self.enabled = logging.getLogger("groundcalc").isEnabledFor(logging.INFO) and total > 0
        if self.enabled and getattr(self.stream, "isatty", lambda: False)():
            from tqdm import tqdm

            self.bar = tqdm(total=total, desc=stage, unit=unit, file=self.stream, leave=True)

    def update(self, n: int = 1) -> None:
        """Count ``n`` more items done."""
        self.done += n
        if not self.enabled:
            return
        if self.bar is not None:
            self.bar.update(n)
            return
        now = time.perf_counter()
        if self.done < self.total and now - self._last < self.INTERVAL_S:
            return
        self._last = now
        elapsed = now - self.t0
        rate = self.done / elapsed if elapsed > 0 else math.inf
        left = (self.total - self.done) / rate if rate > 0 else math.inf
        log.info("%s: %d/%d done (%.2f per s, about %s left)", self.stage, self.done, self.total, rate, _duration(left))

    def close(self) -> None:
        """End the bar."""
        if self.bar is not None:
            self.bar.close()

    def __enter__(self) -> Progress:
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def _duration(seconds: float) -> str:
    if not math.isfinite(seconds):
        return "?"
    if seconds < 90:
        return f"{seconds:.0f} s"
    if seconds < 5400:
        return f"{seconds / 60:.0f} min"
    return f"{seconds / 3600:.1f} h"
