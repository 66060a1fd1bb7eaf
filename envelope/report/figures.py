"""Figures in the reports: only PNGs inside the output folder, linked or embedded.

A report links its figures by relative path (``figures/x.png``) by default, so the page
stays small however many thermograms the survey has; ``embed=True`` puts them in the page
as data URIs (one self-contained file). Either way a figure is used only when its path,
symlinks resolved, lies inside the output folder and the file starts with the PNG
signature: a results file cannot make a report show a file from elsewhere.
"""

from __future__ import annotations

import base64
from collections.abc import Mapping
from pathlib import Path
from urllib.parse import quote

from envelope.report.facts import get, label_of

__all__ = ["MAX_FIGURE_BYTES", "PNG_MAGIC", "Figures", "draw_charts"]

MAX_FIGURE_BYTES = 20 * 1024 * 1024
"""Largest PNG a report uses [bytes]."""
PNG_MAGIC = b"\x89PNG\r\n\x1a\n"
"""PNG signature (ISO/IEC 15948, 5.2)."""


class Figures:
    """Resolves the figure paths of the results to what a page may show.

    Parameters
    ----------
    out_dir : path
        The output folder the pages are written to.
    figures_dir : path
        Where ``figures/<name>`` of the results lives (normally ``out_dir/figures``).
    embed : bool
        Data URIs instead of relative links.
    """

    def __init__(self, out_dir: Path, figures_dir: Path, embed: bool = False):
        self.out_dir = Path(out_dir).resolve()
        self.figures_dir = Path(figures_dir).resolve()
        self.embed = embed
        self.missing: list[str] = []

    def path(self, rel) -> Path | None:
        """The PNG file behind a results path, or None (missing, outside, not a PNG)."""
        if not rel or not isinstance(rel, str):
            return None
        parts = Path(rel).parts
        if Path(rel).is_absolute() or ".." in parts or not parts:
            return None
        sub = Path(*parts[1:]) if parts[0] == "figures" and len(parts) > 1 else Path(*parts)
        cand = self.figures_dir / sub
        try:
            real = cand.resolve(strict=True)
        except OSError:
            return None
        inside = self.out_dir in real.parents or (self.figures_dir in real.parents)
        if not inside or not real.is_file() or real.stat().st_size > MAX_FIGURE_BYTES:
            return None
        with real.open("rb") as fh:
            if fh.read(8) != PNG_MAGIC:
                return None
        return real

    def src(self, rel) -> str | None:
        """What an ``<img src>`` gets: a relative link inside the output folder, or a data
        URI when embedding (or when the figures folder lies outside the output folder)."""
        real = self.path(rel)
        if real is None:
            if rel:
                self.missing.append(str(rel))
            return None
        if not self.embed and self.out_dir in real.parents:
            return quote(real.relative_to(self.out_dir).as_posix())
        return "data:image/png;base64," + base64.b64encode(real.read_bytes()).decode("ascii")

    def fetcher(self):
        """A WeasyPrint URL fetcher that serves only this output folder's PNGs (and PNG data
        URIs); anything else is refused, so the PDF cannot pull in another file."""
        import base64 as b64
        from urllib.parse import unquote, urlparse

        from weasyprint.urls import URLFetcher, URLFetcherResponse

        figs = self

        class OutputFolderFetcher(URLFetcher):
            def fetch(self, url, headers=None):
                head = {"Content-Type": "image/png"}
                if url.startswith("data:image/png;base64,"):
                    data = b64.b64decode(url.split(",", 1)[1])
                    if data.startswith(PNG_MAGIC):
                        return URLFetcherResponse(url, data, head)
                elif url.startswith("file:"):
                    real = Path(unquote(urlparse(url).path))
                    ok = figs.path(f"figures/{real.name}")
                    if ok is not None and ok == real.resolve():
                        return URLFetcherResponse(url, ok.read_bytes(), head)
                raise ValueError(f"not a figure of the output folder: {url[:80]}")

        return OutputFolderFetcher(allowed_protocols=("file", "data"))


def draw_charts(results: Mapping, figures_dir: Path) -> dict[str, str]:
    """Draw the heat-loss and savings charts into `figures_dir`; their results-style paths.

    The charts come from the results alone, so ``envelope rerender`` redraws them.
    """
    from envelope.plots.energy import heat_loss_chart, savings_chart

    figures_dir = Path(figures_dir)
    out = {}
    heat = results.get("heat_loss")
    kinds = {e.get("name"): e.get("kind") for e in results.get("elements") or []}
    labels = {e.get("name"): label_of(results, e.get("name"))
              for e in results.get("elements") or []}
    if isinstance(heat, Mapping) and heat.get("by_element"):
        heat_loss_chart(heat, results.get("heat_loss_after"), figures_dir / "heat-loss.png",
                        kinds=kinds, labels=labels)
        out["heat_loss"] = "figures/heat-loss.png"
    measures = [m for m in results.get("measures") or [] if isinstance(m, Mapping)]
    if measures:
        if results.get("package"):
            measures.append(results["package"])
        savings_chart(measures, figures_dir / "savings.png",
                      get(results, "survey", "currency", default=""))
        out["savings"] = "figures/savings.png"
    return out
