"""The worked example of docs/python.md runs as written (its own asserts check it against
ordex's other routes), and help() has something to say about every public name."""
import os
import re

import pytest

import ordex

ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))


def test_python_blocks_run(monkeypatch, capsys):
    with open(os.path.join(ROOT, "docs", "python.md")) as f:
        blocks = re.findall(r"```python\n(.*?)```", f.read(), re.S)
    assert len(blocks) >= 1
    monkeypatch.chdir(ROOT)  # the example names models/ relative to the source tree
    for block in blocks:
        exec(compile(block, "docs/python.md", "exec"), {})
    assert "cost_predicted" in capsys.readouterr().out


@pytest.mark.parametrize("name", ["transition", "floquet", "gramian", "regulate", "respond", "discretize",
                                  "estimate", "load_model", "load_nonlinear", "linearize", "simulate"])
def test_help_texts(name):
    text = getattr(ordex, name).__doc__
    assert "(" in text
    assert len(text) > 200
