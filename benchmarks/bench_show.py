"""`anharmony show` of demo results: whole-command wall time (imports included), best of 7.

Run by hand: ``python benchmarks/bench_show.py``; it runs two demo cases into a temporary
folder first, then times ``python -m anharmony show FILE`` and, for scale, a bare
``python -c "import xarray"`` and ``python -c "import anharmony"``.
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _machine import describe

ROOT = Path(__file__).resolve().parents[1]
CASES = ("diatomic-morse", "neutron-ws")


def best_wall(cmd: list[str], env: dict[str, str], repeat: int = 7) -> float:
    ts = []
    for _ in range(repeat):
        t = time.perf_counter()
        subprocess.run(cmd, env=env, check=True, capture_output=True, timeout=120)
        ts.append(time.perf_counter() - t)
    return min(ts)


def main() -> None:
    env = {**os.environ, "PYTHONPATH": str(ROOT / "src"), "OPENBLAS_NUM_THREADS": "1"}
    print(f"## `anharmony show` ({time.strftime('%Y-%m-%d')})\n\nMachine: {describe()}\n")
    print("| what | wall time (s), best of 7 |")
    print("|---|---|")
    with tempfile.TemporaryDirectory() as tmp:
        for case in CASES:
            subprocess.run([sys.executable, "-m", "anharmony", "run",
                            str(ROOT / "cases" / f"{case}.yaml"), "--output", tmp],
                           env=env, check=True, capture_output=True, timeout=600)
        for path in sorted(Path(tmp).glob("*.nc"))[:3]:
            t = best_wall([sys.executable, "-m", "anharmony", "show", str(path)], env)
            print(f"| `anharmony show {path.name}` | {t:.3f} |")
    for mod in ("anharmony", "xarray", "netCDF4"):
        t = best_wall([sys.executable, "-c", f"import {mod}"], env)
        print(f"| `python -c 'import {mod}'` | {t:.3f} |")
    t = best_wall([sys.executable, "-c", "pass"], env)
    print(f"| `python -c pass` (interpreter start) | {t:.3f} |")


if __name__ == "__main__":
    main()
