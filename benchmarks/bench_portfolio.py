"""Benchmark: `envelope portfolio` on a local Dask cluster against one survey after another.

Copies of the demo survey (``example_house/``) under one parent folder, assessed with the
demo's settings but 2,000 Monte Carlo draws instead of 20,000 (``DRAWS``: the Monte Carlo is
a small part of a survey's time, figures and reports are most of it, and the full draws make
the serial side of the full run last over ten minutes on a shared 2-core machine):

- ``serial``: the same task function (`run_house`) called for each house in this process,
  one after another, then the portfolio table written: what one machine does without Dask
  (this process pays the imports once, as a worker does);
- ``cluster``: `run_portfolio` on a local cluster of 2 worker processes with 1 thread each,
  cluster start and table included.

Prints ``portfolio_speedup`` (serial wall time over cluster wall time; target >= 1.7 with 16
houses on 2 workers), the wall times, ``portfolio_speedup_cpu_bound`` (serial CPU time over
the CPU time of the busiest worker's tasks: the speedup on a machine the run has to itself,
which other load cannot distort), ``portfolio_resume_s`` (the same run again: every
house up to date, skipped), the peak resident memory of each worker process
(``portfolio_worker_peak_rss_mb``, the largest) against the cluster's limit per worker, and
``demo_output_mb_per_house`` (the bytes of one house's output folder; target < 20 MB).
Wall times on a shared machine are inflated by other load: ``portfolio_load_avg`` is printed
beside them.
"""

from __future__ import annotations

import os
import shutil
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DRAWS = 2000


def _folder_bytes(folder: Path) -> int:
    return sum(p.stat().st_size for p in folder.rglob("*") if p.is_file())


def run(quick: bool = False) -> dict[str, float]:
    sys.path.insert(0, str(ROOT))
    from envelope.portfolio import collect_entries, rank_houses, run_portfolio, write_table
    from envelope.portfolio_house import HouseTask, run_house

    houses = 4 if quick else 16
    figures: dict[str, float] = {"portfolio_houses": float(houses),
                                 "portfolio_draws": float(DRAWS)}
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        parent = tmp / "surveys"
        for i in range(houses):
            shutil.copytree(ROOT / "example_house", parent / f"house-{i:02d}",
                            ignore=shutil.ignore_patterns("generate.py", "truth.json", "*.md"))
        entries = collect_entries([parent])

        load0 = os.getloadavg()[0]
        t0, c0 = time.perf_counter(), time.process_time()
        outcomes = [run_house(HouseTask(e.house_id, str(e.survey), str(tmp / "serial" / e.house_id),
                                        draws=DRAWS)) for e in entries]
        write_table(rank_houses(outcomes), tmp / "serial" / "portfolio", [e.survey for e in entries])
        serial_s = time.perf_counter() - t0
        figures["portfolio_serial_s"] = serial_s
        figures["portfolio_serial_cpu_s"] = time.process_time() - c0
        failed = [o for o in outcomes if o.state != "assessed"]
        if failed:
            raise RuntimeError(f"serial run: {failed[0].house_id}: {failed[0].error}")

        t0 = time.perf_counter()
        run = run_portfolio(entries, tmp / "cluster", workers=2, draws=DRAWS)
        cluster_s = time.perf_counter() - t0
        if any(o.state != "assessed" for o in run.outcomes):
            raise RuntimeError("cluster run: not every house assessed")
        figures["portfolio_cluster_s"] = cluster_s
        figures["portfolio_speedup"] = serial_s / cluster_s
        figures["portfolio_cpu_s_per_house_in_workers"] = (
            sum(o.cpu_s for o in run.outcomes) / houses)
        per_worker: dict[str, float] = {}
        for o in run.outcomes:
            per_worker[o.worker] = per_worker.get(o.worker, 0.0) + o.cpu_s
        figures["portfolio_speedup_cpu_bound"] = (
            figures["portfolio_serial_cpu_s"] / max(per_worker.values()))
        figures["portfolio_worker_peak_rss_mb"] = max(run.peak_rss_mb_per_worker.values())
        figures["portfolio_workers_seen"] = float(len(run.peak_rss_mb_per_worker))
        limit = run.cluster.rsplit("memory limit ", 1)
        if len(limit) == 2:
            figures["portfolio_worker_memory_limit_gib"] = float(limit[1].split()[0])

        t0 = time.perf_counter()
        again = run_portfolio(entries, tmp / "cluster", workers=2, draws=DRAWS)
        figures["portfolio_resume_s"] = time.perf_counter() - t0
        if any(o.state != "up to date" for o in again.outcomes):
            raise RuntimeError("resumed run: not every house skipped")
        figures["portfolio_load_avg"] = (load0 + os.getloadavg()[0]) / 2.0

        house = tmp / "cluster" / entries[0].house_id
        figures["demo_output_mb_per_house"] = _folder_bytes(house) / 2**20
        for name in ("report.html", "figures"):
            p = house / name
            size = _folder_bytes(p) if p.is_dir() else p.stat().st_size
            figures[f"demo_output_{name.replace('.', '_')}_mb"] = size / 2**20
        figures["portfolio_table_mb"] = _folder_bytes(tmp / "cluster" / "portfolio") / 2**20
    return figures


if __name__ == "__main__":
    for k, v in run("--quick" in sys.argv).items():
        print(f"{k}: {v:.4g}")
