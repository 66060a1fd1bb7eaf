"""Full assessment of example_house/, reports included, with a per-stage breakdown.

Prints ``demo_total_s`` and ``demo_<stage>_s`` for load, geometry, correct,
u_and_uncertainty, condensation, defects, series, energy, figures and reports, plus
``demo_numerical_s`` (everything but figures and reports). Target: total under 10 s on a
2-core machine, numerical stages under 2 s.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def run(quick: bool = False) -> dict[str, float]:
    sys.path.insert(0, str(ROOT))
    from envelope.assess import StageClock, assess_survey
    from envelope.outputs import staged_folder, write_figures, write_tables
    from envelope.report import write_reports
    from envelope.results import to_results
    from envelope.survey import load_survey

    clock = StageClock()
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
    figures = {"demo_total_s": total}
    for name, sec in sorted(clock.seconds.items()):
        figures[f"demo_{name}_s"] = sec
    figures["demo_numerical_s"] = sum(v for k, v in clock.seconds.items() if k not in ("figures", "reports"))
    return figures


if __name__ == "__main__":
    for k, v in run("--quick" in sys.argv).items():
        print(f"{k}: {v:.3g}")
