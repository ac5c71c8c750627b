"""docs/api.md runs as written: every ```python block, in order, in one namespace.

The checks inside the blocks name their sources (divergence theorem, ISA density, the one-answer rule).
"""

import re
from pathlib import Path

import pytest

DOC = Path(__file__).resolve().parents[1] / "docs" / "api.md"


def blocks():
    return re.findall(r"```python\n(.*?)```", DOC.read_text(), flags=re.S)


def test_the_api_page_has_an_example_per_entry_point():
    text = "\n".join(blocks())
    for name in ("sample_path", "load_body", "read_taps", "project_taps", "make_field", "compute_loads",
                 "compute_uncertainty", "plan_taps", "compute_change", "read_sheet", "process_sheet", "write_json"):
        assert f"mp.{name}(" in text, name


@pytest.mark.slow
def test_the_api_page_runs(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    ns = {}
    for i, code in enumerate(blocks()):
        exec(compile(code, f"{DOC.name} block {i + 1}", "exec"), ns)
    out = capsys.readouterr().out
    assert "default: CL" in out and "new taps" in out
