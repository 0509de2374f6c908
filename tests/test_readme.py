"""The README's code, checked: a snippet a newcomer copies must run as written and print
what the README says it prints (issue "newcomer"; the project's own rule, no source)."""

import contextlib
import io
import re
import shutil
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
BLOCKS = re.findall(r"```python\n(.*?)```", (ROOT / "README.md").read_text("utf-8"), re.S)


def test_every_snippet_imports_what_it_uses():
    for block in BLOCKS:
        if "vpkit." in block:
            assert re.search(r"^(import vpkit|from vpkit)", block, re.M), block


def test_the_bench_check_example_prints_what_the_readme_shows(tmp_path, monkeypatch):
    [block] = [b for b in BLOCKS if "check_reading(" in b]
    shown = [line[2:] for line in block.splitlines() if line.startswith("# ")]
    shutil.copytree(ROOT / "data" / "demo", tmp_path / "data" / "demo",
                    ignore=shutil.ignore_patterns("*.vpkit-*"))
    monkeypatch.chdir(tmp_path)
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        exec(compile(block, "README.md", "exec"), {})
    assert out.getvalue().splitlines() == shown
