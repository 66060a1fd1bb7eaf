"""Terminal summary and command-line help: 100 columns, the verdict and the night last,
colour on a terminal only, --version, --help with defaults and units."""

from __future__ import annotations

import io
import re

from rich.console import Console
from typer.testing import CliRunner

from envelope import __version__
from envelope.cli import app
from envelope.terminal import MAX_WIDTH, print_summary

ANSI = re.compile(r"\x1b\[[0-9;]*m")
runner = CliRunner()


def _printed(results, width, terminal):
    buf = io.StringIO()
    console = Console(file=buf, width=width, force_terminal=terminal,
                      color_system="standard" if terminal else None, highlight=False)
    print_summary(results, "out/house", console)
    return buf.getvalue()


def test_fits_100_columns_and_ends_with_verdict_and_night(small_run):
    _, results, _ = small_run
    for width in (MAX_WIDTH, 60):
        text = _printed(results, width, terminal=True)
        lines = [ANSI.sub("", ln).rstrip() for ln in text.splitlines() if ln.strip()]
        assert max(len(ln) for ln in lines) <= width, width
    plain = [ln.rstrip() for ln in _printed(results, MAX_WIDTH, False).splitlines() if ln.strip()]
    assert plain[-2].startswith("Builder check: INCONCLUSIVE")
    assert plain[-1].startswith("Night: valid")
    heat = next(ln for ln in plain if ln.startswith("Heat loss H"))
    assert "kWh a year (95 %:" in heat


def test_colour_on_a_terminal_only(small_run):
    _, results, _ = small_run
    assert ANSI.search(_printed(results, MAX_WIDTH, terminal=True))
    assert not ANSI.search(_printed(results, MAX_WIDTH, terminal=False))


def test_control_characters_and_markup_print_as_text(small_run):
    import copy

    _, results, _ = small_run
    r = copy.deepcopy(results)
    r["elements"][0]["label"] = "[bold red]wall\x1b[31m\x07"
    text = _printed(r, MAX_WIDTH, terminal=False)
    assert "[bold red]wall" in text and "\x1b" not in text and "\x07" not in text


def test_version_and_help_with_defaults_and_units():
    res = runner.invoke(app, ["--version"])
    assert res.exit_code == 0 and res.stdout.strip() == f"envelope {__version__}"
    res = runner.invoke(app, ["assess", "--help"], terminal_width=100)
    assert res.exit_code == 0
    out = " ".join(res.stdout.split())
    assert "<bool>" not in out
    assert "[W/(m²·K)]" in out and "Default: analysis.monte_carlo_draws" in out
    assert "Default: off" in out
    res = runner.invoke(app, ["correct", "--help"], terminal_width=100)
    assert "[cm per pixel]" in " ".join(res.stdout.split())
    res = runner.invoke(app, ["rerender", "--help"], terminal_width=100)
    assert "--single-file" in res.stdout
    for cmd in ("inspect", "correct", "assess", "rerender", "outline"):
        out = runner.invoke(app, [cmd, "--help"], terminal_width=100).stdout
        assert max(len(ln) for ln in out.splitlines()) <= 100, cmd
