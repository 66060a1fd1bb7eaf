"""Full assessment of example_house/, reports included, with a per-stage breakdown.

Prints ``demo_total_s`` and ``demo_<stage>_s`` for load, correct, view, series, energy,
figures and reports (wall time), ``demo_figures_cpu_s`` / ``demo_reports_cpu_s`` (CPU time of
this process: steadier than wall time on a shared machine), ``demo_numerical_s``
(everything but figures and reports), and the sizes: ``demo_report_html_bytes``,
``demo_figures_bytes``, ``demo_figures_count``, ``demo_summary_pdf_bytes``, and
``report_html_bytes_160_views`` (the same results with the thermograms repeated to 160
views: the page grows by its text only, the figures being linked). Targets: total under
10 s on a 2-core machine, numerical stages under 2 s, report.html under 5 MB.

CPU time too, which load from other processes on a shared machine does not inflate:
``demo_cpu_s`` is the CPU time of the whole run once the modules are imported (what a
portfolio worker pays per survey; ``demo_import_cpu_s`` is paid once per process), and
``demo_cpu_vs_numerics`` is that over the CPU time of the numerical stages (target <= 3).
"""

from __future__ import annotations

import contextlib
import copy
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _views_160(results: dict) -> dict:
    """The results with their thermograms repeated to 160 views (new ids, same figures)."""
    r = copy.deepcopy(results)
    base = list(r["thermograms"])
    r["thermograms"] = [dict(t, id=f"{t['id']}-{k:02d}") for k in range(160 // len(base) + 1)
                        for t in base][:160]
    return r


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
    if quick:
        import dataclasses

        survey = dataclasses.replace(survey, analysis=dataclasses.replace(
            survey.analysis, monte_carlo_draws=2000))
    a = assess_survey(survey, clock=clock)
    sizes: dict[str, float] = {}
    with tempfile.TemporaryDirectory() as tmp, staged_folder(Path(tmp) / "out") as out:
        with clock.stage("figures"):
            results = to_results(a)
            write_tables(results, out)
            write_figures(a, out)
        with clock.stage("reports"):
            write_reports(results, out, out / "figures")
        total = time.perf_counter() - t0
        cpu = time.process_time() - c0
        figs = [p for p in (out / "figures").iterdir() if p.suffix == ".png"]
        sizes["demo_report_html_bytes"] = (out / "report.html").stat().st_size
        sizes["demo_figures_bytes"] = sum(p.stat().st_size for p in figs)
        sizes["demo_figures_count"] = len(figs)
        sizes["demo_summary_pdf_bytes"] = (out / "summary.pdf").stat().st_size
        sizes["demo_output_bytes"] = sum(p.stat().st_size for p in out.rglob("*") if p.is_file())
        if not quick:
            import shutil

            big = Path(tmp) / "big"
            shutil.copytree(out / "figures", big / "figures")
            write_reports(_views_160(results), big, big / "figures")
            sizes["report_html_bytes_160_views"] = (big / "report.html").stat().st_size
    figures = {"demo_total_s": total}
    for name, sec in sorted(clock.seconds.items()):
        figures[f"demo_{name}_s"] = sec
    figures["demo_numerical_s"] = sum(v for k, v in clock.seconds.items()
                                      if k not in ("figures", "reports"))
    numerical_cpu = sum(v for k, v in clock.cpu_seconds.items() if k not in ("figures", "reports"))
    figures["demo_import_cpu_s"] = c_import
    figures["demo_cpu_s"] = cpu
    figures["demo_numerical_cpu_s"] = numerical_cpu
    figures["demo_figures_cpu_s"] = clock.cpu_seconds.get("figures", 0.0)
    figures["demo_reports_cpu_s"] = clock.cpu_seconds.get("reports", 0.0)
    figures["demo_cpu_vs_numerics"] = cpu / numerical_cpu
    figures.update(sizes)
    return figures


if __name__ == "__main__":
    for k, v in run("--quick" in sys.argv).items():
        print(f"{k}: {v:.4g}")
