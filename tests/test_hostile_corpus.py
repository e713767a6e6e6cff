"""Every case of the hostile corpus (tests/hostile_corpus.py) as a ``growthcore`` command in a
subprocess: the outcome it must have, a one-line message and never a traceback, within its ceiling
on wall time and on peak resident memory (the child's own, read at its exit).

Also: a server's memory stays at its baseline while hostile files are read and refused, since
heavy jobs run in worker processes.

The ceilings are generous bounds for a loaded two-core machine, set about 5 to 20 times above the
times measured (the cases took 54 s to hours, and 1 to 12 GB, before the limits).
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
import time
from pathlib import Path

import pytest

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from hostile_corpus import CASES, Case  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]


#: Runs ``growthcore ARGS`` and, at exit, writes the peak resident size of its own memory (VmHWM, in
#: kB) to the file named by GC_PEAK_FILE. The peak that wait4 reports would include the memory of the
#: test process the child was forked from (Linux keeps it across exec), which grows over a full run.
_PEAK_WRAPPER = """
import atexit, os, sys
def _peak():
    with open('/proc/self/status') as status, open(os.environ['GC_PEAK_FILE'], 'w') as out:
        out.write(next((line.split()[1] for line in status if line.startswith('VmHWM:')), '0'))
atexit.register(_peak)
from growthcore.cli import main
sys.argv = ['growthcore', *sys.argv[1:]]
sys.exit(main())
"""


def _run(args: list[str], cwd: str) -> tuple[int, str, float, float]:
    """Exit code, output, wall seconds and peak resident MB of ``growthcore ARGS`` in a subprocess."""
    peak_file = os.path.join(cwd, "peak-kb.txt")
    env = {**os.environ, "PYTHONPATH": str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""),
           "GC_PEAK_FILE": peak_file}
    started = time.monotonic()
    proc = subprocess.run([sys.executable, "-c", _PEAK_WRAPPER, *args], cwd=cwd, env=env,
                          stdout=subprocess.PIPE, stderr=subprocess.STDOUT, check=False)
    seconds = time.monotonic() - started
    try:
        with open(peak_file, encoding="ascii") as fh:
            peak_kb = float(fh.read() or 0)
    except OSError:  # the process died before its exit hook: no reading, the ceiling cannot pass silently
        peak_kb = float("inf")
    return proc.returncode, proc.stdout.decode("utf-8", "replace"), seconds, peak_kb / 1024


@pytest.mark.parametrize("case", CASES, ids=[c.name for c in CASES])
def test_hostile_case(case: Case, tmp_path: Path) -> None:
    args = case.make(str(tmp_path))
    code, out, seconds, peak_mb = _run(args, str(tmp_path))
    assert "Traceback" not in out, out[-2000:]
    assert code == case.exit_code, out[-2000:]
    assert re.search(case.expect, out), out[-2000:]
    if code != 0:
        problems = [line for line in out.splitlines() if line.startswith("growthcore")]
        assert len(problems) == 1, out[-2000:]  # one line says what is wrong
    assert seconds <= case.max_seconds, f"{seconds:.1f} s"
    assert peak_mb <= case.max_mb, f"{peak_mb:.0f} MB"


SERVER_SCRIPT = r"""
import base64, gc, os, sys
sys.path.insert(0, sys.argv[1])
from hostile_corpus import CASES

def rss_mb():
    with open("/proc/self/statm") as fh:
        return int(fh.read().split()[1]) * os.sysconf("SC_PAGE_SIZE") / 2**20

def main():
    from growthcore.app.callbacks.data import import_source
    from growthcore.app.heavy import HeavyConfig, HeavyRunner
    from growthcore.errors import GrowthcoreInputError
    runner = HeavyRunner(HeavyConfig(budget_s=60))
    folder = sys.argv[2]
    runner.run("warming up", int, 0)
    picked = [c for c in CASES if c.make.__name__ in ("make", "_blank_rows", "_dimension_bomb", "_far_column")]
    files = []
    for i, case in enumerate(picked):
        sub = os.path.join(folder, str(i)); os.makedirs(sub)
        files += [a for a in case.make(sub) if a.endswith((".csv", ".xlsx"))][:1]
    gc.collect()
    before = rss_mb()
    for path in files * 2:
        with open(path, "rb") as fh:
            source = {"filename": os.path.basename(path), "b64": base64.b64encode(fh.read()).decode()}
        try:
            runner.run("reading the file", import_source, source)
        except GrowthcoreInputError:
            pass
        del source
    gc.collect()
    print(len(files), round(before, 1), round(rss_mb(), 1))

if __name__ == "__main__":
    main()
"""


def test_server_memory_returns_to_baseline(tmp_path: Path) -> None:
    script = tmp_path / "server_memory.py"
    script.write_text(SERVER_SCRIPT, encoding="utf-8")
    env = {**os.environ, "PYTHONPATH": str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", "")}
    done = subprocess.run([sys.executable, str(script), str(ROOT / "tests"), str(tmp_path / "files")],
                          capture_output=True, text=True, env=env, timeout=600, cwd=str(tmp_path))
    assert done.returncode == 0, done.stderr[-2000:]
    n, before, after = done.stdout.split()
    assert int(n) >= 3
    # the files are read (and refused) in worker processes: the server holds only the uploads
    # while they are handed over, then lets them go
    assert float(after) - float(before) < 40, (before, after)
