"""Reports (edge: writes files): the auditor's report, the builder's check and the
homeowner summary, from the results dict alone (so ``envelope rerender`` rebuilds them).

- `write_reports` (in `report.write`) renders the three pages from Jinja2 templates with
  autoescaping and the homeowner PDF from the same HTML with WeasyPrint.
- `report.numbers` prints every number in one convention (95 % intervals, precision from
  the interval, U never below zero); `report.facts` decides what the pages say (states,
  caveats, verdict bases, remedies); `report.auditor`, `report.builder` and
  `report.homeowner` build each page's context; `report.figures` links or embeds only the
  output folder's PNGs; `report.methods` numbers the citations.

Submodules import one another directly, never this package's names, so there is no
import cycle.
"""

from envelope.report.write import write_reports

__all__ = ["write_reports"]
