"""Run every benchmark of the project and print one ``name: value`` line per figure.

Usage: ``python benchmarks/run.py [--quick] [--only NAME ...]``. Each ``bench_<topic>.py``
beside this file has ``run(quick: bool) -> dict[str, float]``. Figures are printed, never
asserted: machines are shared and noisy.
"""

from __future__ import annotations

import argparse
import importlib.util
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="small sizes: the whole run under a minute")
    ap.add_argument("--only", nargs="*", default=None, help="topics to run, e.g. radiometry defects")
    args = ap.parse_args(argv)
    failed = 0
    for path in sorted(HERE.glob("bench_*.py")):
        topic = path.stem.removeprefix("bench_")
        if args.only and topic not in args.only:
            continue
        spec = importlib.util.spec_from_file_location(path.stem, path)
        mod = importlib.util.module_from_spec(spec)
        sys.modules[spec.name] = mod  # dataclasses in a benchmark look their module up
        t0 = time.perf_counter()
        try:
            spec.loader.exec_module(mod)
            figures = mod.run(quick=args.quick)
        except Exception as exc:  # noqa: BLE001 - report and go on with the others
            print(f"{topic}_error: {type(exc).__name__}: {exc}", file=sys.stderr)
            failed += 1
            continue
        for name, value in figures.items():
            print(f"{name}: {value:.6g}" if isinstance(value, float) else f"{name}: {value}")
        print(f"{topic}_bench_wall_s: {time.perf_counter() - t0:.3g}")
        sys.stdout.flush()
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
