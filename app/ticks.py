"""Chunked work on the ticks of a dcc.Interval: one chunk per answer, a cancel heard between chunks.

Each answer allows the timer exactly one more tick (its ``max_intervals``) while work is left, so
chunks never overlap however long one takes, and a run ends with the answer that allows none. The
batch run (app/callbacks/series/run.py) and the bootstrap (app/callbacks/dynamics/bootstrap.py)
both run this way; what a chunk does and how progress reads are theirs.
"""

from __future__ import annotations

import time
from collections.abc import Mapping
from typing import Any


def allow_next_tick(n_intervals: int | None, more: bool = True) -> int:
    """The timer's ``max_intervals`` after an answer: one tick past those fired while ``more`` work is left."""
    fired = int(n_intervals or 0)
    return fired + 1 if more else fired


def seconds_since(started: Any, now: float | None = None) -> float:
    """Wall-clock seconds since the run began: the time the user waited, not only the server's share."""
    return (time.time() if now is None else now) - float(started)


def stopped(cancel: Mapping[str, Any] | None, run: Any) -> bool:
    """Whether the cancel store names run ``run`` (a stop of an earlier run says nothing of this one)."""
    return bool(cancel and cancel.get("run") == run)


def cancel_pressed(clicks: int | None, seen: int | None) -> bool:
    """Whether a cancel button has been pressed since the run began (when it had ``seen`` clicks)."""
    return int(clicks or 0) > int(seen or 0)


__all__ = ["allow_next_tick", "cancel_pressed", "seconds_since", "stopped"]
