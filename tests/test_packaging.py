"""The installed layout: every package folder is listed in pyproject.toml, and the dashboard installs
as growthcore.app (from the app/ folder), never as a top-level module named ``app``."""

from __future__ import annotations

import importlib
from pathlib import Path

import pytest

tomllib = pytest.importorskip("tomllib")

ROOT = Path(__file__).resolve().parents[1]


def _config() -> dict:
    return tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["tool"]["setuptools"]


def test_every_package_folder_is_installed() -> None:
    config = _config()
    folders = {"growthcore": "growthcore", **{name: path for name, path in config["package-dir"].items()}}
    on_disk = set()
    for name, folder in folders.items():
        for init in (ROOT / folder).rglob("__init__.py"):
            rel = init.parent.relative_to(ROOT / folder).parts
            on_disk.add(".".join([name, *rel]))
    assert config["package-dir"] == {"growthcore.app": "app"}
    assert set(config["packages"]) == on_disk


def test_the_dashboard_is_growthcore_app() -> None:
    server = importlib.import_module("growthcore.app.server")
    assert Path(server.__file__).resolve().parent == ROOT / "app"  # the folder stays at the top
    assert "app" not in _config()["packages"]  # no top-level module of that name is installed
