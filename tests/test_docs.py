"""The documentation's code runs: every ```python block of docs/api.md is executed as written."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

pytestmark = pytest.mark.slow  # runs whole surveys (quick loop: pytest -m 'not slow')

ROOT = Path(__file__).resolve().parents[1]


def python_blocks(path: Path) -> list[str]:
    return re.findall(r"```python\n(.*?)```", path.read_text(encoding="utf-8"), flags=re.S)


@pytest.mark.parametrize("index", range(len(python_blocks(ROOT / "docs" / "api.md"))))
def test_api_page_examples_run(index, monkeypatch, capsys):
    monkeypatch.chdir(ROOT)
    code = python_blocks(ROOT / "docs" / "api.md")[index]
    exec(compile(code, f"docs/api.md[block {index}]", "exec"), {"__name__": "__docs__"})
    assert capsys.readouterr().out.strip()  # each example prints what it found
