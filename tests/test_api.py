"""The public Python API: the README's example runs as written, and the summary's numbers are the fit's."""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys

import pytest

import growthcore as gc

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def test_the_readme_example_runs(tmp_path) -> None:
    """The example as written, run as a script from the repository; two lines after it report what it made."""
    with open(os.path.join(ROOT, "README.md"), encoding="utf-8") as fh:
        readme = fh.read()
    (code,) = re.findall(r"### In Python.*?```python\n(.*?)```", readme, flags=re.S)
    script = tmp_path / "readme_example.py"
    script.write_text(code + "\nimport json\nprint(json.dumps({'ranked': list(ranked.columns), "
                      "'series': list(table['series']), 'figures': sorted(figures)}))\n", encoding="utf-8")
    out = subprocess.run([sys.executable, str(script)], capture_output=True, text=True, cwd=ROOT, check=True,
                         env={**os.environ, "PYTHONPATH": ROOT + os.pathsep + os.environ.get("PYTHONPATH", "")})
    made = json.loads(out.stdout.strip().splitlines()[-1])
    assert {"aicc", "K", "K_se"} <= set(made["ranked"])
    assert made["series"] == ["R1", "R2", "R3"]
    assert made["figures"] == sorted(["trajectory", "residuals", "residuals-fitted", "observed-predicted"])


def test_fit_figures_are_the_dashboards_panels_as_plotly_figures() -> None:
    """The same builders as the app: each fit drawn under its label, its residuals as the fit reports them."""
    import plotly.graph_objects as go

    from growthcore.figures.common import unpacked
    from growthcore.figures.plain import fit_label

    series = gc.load(os.path.join(ROOT, "sample_data", "algae_photobioreactor.csv")).series[0]
    fits = [gc.fit_model(series, "logistic", method="trajectory"), gc.fit_model(series, "gompertz-curve")]
    figures = gc.fit_figures(series, fits, capacity=4.0)
    assert all(isinstance(f, go.Figure) for f in figures.values())
    names = [t.name for t in figures["trajectory"].data]
    assert all(any(n and n.startswith(fit_label(f)) for n in names) for f in fits)
    for fit in fits:
        trace = next(t for t in figures["residuals"].data if t.name and t.name.startswith(fit_label(fit)))
        y = unpacked(trace.y) if isinstance(trace.y, dict) else list(trace.y)
        assert y == pytest.approx([r for r in fit.residuals if r == r], rel=1e-6)


def test_summary_tables_hold_the_fit_numbers() -> None:
    series = gc.load(os.path.join(ROOT, "sample_data", "algae_photobioreactor.csv")).series[0]
    result = gc.fit_model(series, "logistic", method="increments", capacity=4.1)
    summary = result.summary()
    constants = summary.tables[0]
    r = next(row for row in constants.rows if row[0] == "r")
    assert r[1] == f"{result.values['r']:.6g}" and r[2] == f"{result.parameter('r').se:.3g}"
    assert next(row for row in constants.rows if row[0] == "K")[4] == "fixed"
    text = str(summary)
    assert "uncentered R² of the change per step" in text and f"{result.metrics.r2_uncentered:.4g}" in text
    assert "[1] closed-form least squares through the origin" in text
    html = summary._repr_html_()
    assert html.startswith("<div class='growthcore-summary'>") and "<caption>Constants</caption>" in html
    failed = gc.fit_model(gc.Series([0.0, 1.0, 2.5, 4.0], [1.0, 2.0, 3.0, 4.0]), "logistic")
    assert failed.summary().tables == () and "regular grid" in str(failed.summary())


def test_import_growthcore_loads_nothing_heavy() -> None:
    out = subprocess.run([sys.executable, "-c", "import growthcore, sys; print('numpy' in sys.modules)"],
                         capture_output=True, text=True, cwd=ROOT, check=True)
    assert out.stdout.strip() == "False"
    with pytest.raises(AttributeError, match="no attribute 'nothing'"):
        gc.nothing  # noqa: B018


def test_every_public_name_is_what_it_says_even_after_the_subpackages_load() -> None:
    import inspect

    import growthcore.batch  # noqa: F401 - subpackages loaded first must not shadow a public name
    import growthcore.compare  # noqa: F401
    import growthcore.fit  # noqa: F401

    for name in gc.__all__:
        value = getattr(gc, name)
        assert not inspect.ismodule(value), name
