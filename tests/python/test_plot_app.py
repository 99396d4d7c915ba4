"""bin/ordex-plot on real app output: a figure file of each format with the right signature and
the model's names as axis labels, overlaid runs, and every bad input answered with exit 2 and
one line naming the file, leaving no partial figure and never overwriting an input.
Run by ctest as plot_app."""
import os
import subprocess
import xml.etree.ElementTree as ET

import numpy as np
import pytest

from plot_support import BIN_DIR, DATA, MODELS, run, write_input

PLOT = os.path.join(BIN_DIR, "ordex-plot")


def ordex_plot(*args):
    return subprocess.run([PLOT] + [str(a) for a in args], capture_output=True, text=True, timeout=120)


def svg_texts(path):
    root = ET.parse(path).getroot()
    return [("".join(e.itertext())).strip() for e in root.iter() if e.tag.endswith("text")]


def path(folder, name):
    return os.path.join(folder, name)


def svg_line_count(path):
    """Curves drawn: ordex.plot.save gives each data line the SVG id ordex_curve_N."""
    root = ET.parse(path).getroot()
    return sum(1 for g in root.iter() if g.get("id", "").startswith("ordex_curve_"))


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    """A Phi series and three responses (a folder of CSVs) written by the apps, shared by the tests."""
    d = str(tmp_path_factory.mktemp("plot_app"))
    run(["ordex-propagate", "--model", os.path.join(MODELS, "mathieu.toml"), "--csv", f"{d}/phi.csv",
         "--samples", 21])
    t = np.linspace(0, 5, 51)
    write_input(f"{d}/a.csv", t, [np.ones_like(t), np.zeros_like(t)], ["t", "u1", "u2"])
    write_input(f"{d}/b.csv", t, [np.sin(t), np.zeros_like(t)], ["t", "u1", "u2"])
    write_input(f"{d}/c.csv", t, [np.cos(t), np.ones_like(t)], ["t", "u1", "u2"])
    os.mkdir(f"{d}/runs")
    run(["ordex-respond", "--model", os.path.join(DATA, "response_pumped.toml"), "--input", f"{d}/a.csv",
         "--input", f"{d}/b.csv", "--input", f"{d}/c.csv", "--csv", f"{d}/runs"])
    return d


def test_formats(folder):
    signatures = {"png": b"\x89PNG\r\n\x1a\n", "pdf": b"%PDF-"}
    for fmt in ("svg", "png", "pdf"):
        out = path(folder, "phi." + fmt)
        p = ordex_plot(path(folder, "phi.csv"), "-o", out)
        assert p.returncode == 0, p.stderr
        assert p.stderr == ""
        with open(out, "rb") as f:
            data = f.read()
        if fmt == "svg":
            assert "singular values of Phi(t, t0)" in svg_texts(out)
            assert svg_line_count(out) == 2  # two singular values of a 2 x 2 Phi
        else:
            assert data.startswith(signatures[fmt]), fmt


def test_runs_overlaid_from_a_folder(folder):
    out = path(folder, "runs.svg")
    p = ordex_plot(path(folder, "runs"), "-o", out)
    assert p.returncode == 0, p.stderr
    texts = svg_texts(out)
    for name in ("x1", "x2", "y"):  # the model's state and output names label the panels
        assert name in texts
    assert svg_line_count(out) == 9  # 3 panels x 3 runs
    assert "responses: 3 runs" in texts
    p = ordex_plot(path(folder, "runs/a.csv"), "--columns", "y", "-o", path(folder, "y.svg"))
    assert p.returncode == 0, p.stderr
    assert svg_line_count(path(folder, "y.svg")) == 1


def assert_refused(folder, args, *needles, output=None):
    output = output or path(folder, "refused.svg")
    p = ordex_plot(*args, "-o", output)
    assert p.returncode == 2, p.stderr
    assert p.stdout == ""
    lines = p.stderr.splitlines()
    assert len(lines) == 1, p.stderr
    assert lines[0].startswith("ordex-plot: error: "), lines[0]
    for n in needles:
        assert n in lines[0]
    if output != path(folder, "phi.csv"):
        assert not os.path.exists(output)
    assert [f for f in os.listdir(folder) if f.endswith(".tmp")] == []


def test_bad_inputs(folder):
    with open(path(folder, "unknown.csv"), "w") as f:
        f.write("alpha,beta\n1,2\n")
    assert_refused(folder, [path(folder, "unknown.csv")], "unknown.csv", "alpha,beta")
    with open(path(folder, "binary.dat"), "wb") as f:
        f.write(bytes(range(256)))
    assert_refused(folder, [path(folder, "binary.dat")], "binary.dat")
    assert_refused(folder, [path(folder, "missing.csv")], "missing.csv")
    assert_refused(folder, [path(folder, "phi.csv")], "figure.gif", output=path(folder, "figure.gif"))
    assert_refused(folder, [path(folder, "phi.csv"), "--bogus"], "--bogus")
    # The input itself as the output: refused, and the input is intact.
    with open(path(folder, "phi.csv"), "rb") as f:
        before = f.read()
    assert_refused(folder, [path(folder, "phi.csv")], "input", output=path(folder, "phi.csv"))
    with open(path(folder, "phi.csv"), "rb") as f:
        assert f.read() == before


def test_help_and_usage(folder):
    p = ordex_plot("--help")
    assert p.returncode == 0
    for option in ("--output", "--entries", "--columns", "--dpi"):
        assert option in p.stdout
    p = ordex_plot()
    assert p.returncode == 2
    assert len(p.stderr.splitlines()) == 1, p.stderr
