"""The timer arithmetic shared by the batch run and the bootstrap (app/ticks.py)."""

from __future__ import annotations

import pytest

from growthcore.app.ticks import allow_next_tick, cancel_pressed, seconds_since, stopped


def test_each_answer_allows_one_more_tick_while_work_is_left() -> None:
    assert allow_next_tick(None) == 1 and allow_next_tick(0) == 1  # a run's first tick
    assert allow_next_tick(3, more=True) == 4
    assert allow_next_tick(3, more=False) == 3  # no tick past those fired: the run ends


def test_time_waited_is_wall_clock_since_the_start() -> None:
    assert seconds_since(100.0, now=102.5) == pytest.approx(2.5)
    assert seconds_since("100", now=101.0) == pytest.approx(1.0)  # a start read back from the tab


def test_a_stop_belongs_to_its_run_and_a_cancel_to_clicks_after_the_start() -> None:
    assert stopped({"run": 2}, 2) and not stopped({"run": 1}, 2) and not stopped(None, 2)
    assert cancel_pressed(3, 2) and not cancel_pressed(2, 2) and not cancel_pressed(None, 0)
