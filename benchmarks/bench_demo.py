"""Full assessment of example_house/, reports included, with a per-stage breakdown.

Prints ``demo_total_s`` and ``demo_<stage>_s`` for load, geometry, correct,
u_and_uncertainty, condensation, defects, series, energy, figures and reports, plus
``demo_numerical_s`` (everything but figures and reports). Target: total under 10 s on a
2-core machine, numerical stages under 2 s.

CPU time too, which load from other processes on a shared machine does not inflate:
``demo_cpu_s`` is the CPU time of the whole run once the modules are imported (what a
portfolio worker pays per survey; ``demo_import_cpu_s`` is paid once per process), and
``demo_cpu_vs_numerics`` is that over the CPU time of the numerical stages (target <= 3).
"""

from __future__ import annotations

import contextlib
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def run(quick: bool = False) -> dict[str, float]:
    sys.path.insert(0, str(ROOT))
    c_import = time.process_time()
    from envelope.assess import StageClock, assess_survey
    from envelope.outputs import staged_folder, write_figures, write_tables
    from envelope.report import write_reports
    from envelope.results import to_results
    from envelope.survey import load_survey

    c_import = time.process_time() - c_import

    class WallAndCpu(StageClock):
        """Wall time per stage (``seconds``) and CPU time per stage (``cpu_seconds``)."""

        def __init__(self):
            super().__init__()
            self.cpu_seconds: dict[str, float] = {}

        @contextlib.contextmanager
        def stage(self, name: str):
            c0 = time.process_time()
            try:
                with super().stage(name):
                    yield
            finally:
                self.cpu_seconds[name] = self.cpu_seconds.get(name, 0.0) + time.process_time() - c0

    clock = WallAndCpu()
    c0 = time.process_time()
    t0 = time.perf_counter()
    with clock.stage("load"):
        survey = load_survey(ROOT / "example_house")
    a = assess_survey(survey, clock=clock)
    with tempfile.TemporaryDirectory() as tmp, staged_folder(Path(tmp) / "out") as out:
        with clock.stage("figures"):
            results = to_results(a)
            write_tables(results, out)
            write_figures(a, out)
        with clock.stage("reports"):
            write_reports(results, out, out / "figures")
    total = time.perf_counter() - t0
    cpu = time.process_time() - c0
    figures = {"demo_total_s": total}
    for name, sec in sorted(clock.seconds.items()):
        figures[f"demo_{name}_s"] = sec
    figures["demo_numerical_s"] = sum(v for k, v in clock.seconds.items() if k not in ("figures", "reports"))
    numerical_cpu = sum(v for k, v in clock.cpu_seconds.items() if k not in ("figures", "reports"))
    figures["demo_import_cpu_s"] = c_import
    figures["demo_cpu_s"] = cpu
    figures["demo_numerical_cpu_s"] = numerical_cpu
    figures["demo_figures_cpu_s"] = clock.cpu_seconds.get("figures", 0.0)
    figures["demo_reports_cpu_s"] = clock.cpu_seconds.get("reports", 0.0)
    figures["demo_cpu_vs_numerics"] = cpu / numerical_cpu
    return figures


if __name__ == "__main__":
    for k, v in run("--quick" in sys.argv).items():
        print(f"{k}: {v:.3g}")
