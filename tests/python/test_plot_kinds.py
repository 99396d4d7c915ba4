"""bin/ordex-plot on every kind of app output: each writes a non-empty SVG whose axis labels are
the expected names and whose number of curves follows from the result itself (the states of
Phi, the entries of a gain schedule or matrix series, the columns of a response, ...); the same
figure as a PNG (ordex.plot.save, the app's writer) has the PNG signature. The apps run once for
the whole file; the ordex-plot processes run side by side. Run by ctest as plot_kinds."""
import json
import os
import subprocess
import xml.etree.ElementTree as ET

import pytest

from plot_support import BIN_DIR, DATA, load_plot_module, read_csv, run, write_app_results

PLOT = os.path.join(BIN_DIR, "ordex-plot")
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


def svg_texts(path):
    root = ET.parse(path).getroot()
    return [("".join(e.itertext())).strip() for e in root.iter() if e.tag.endswith("text")]


def svg_curve_count(path):
    """Curves drawn: ordex.plot.save gives each data line the SVG id ordex_curve_N."""
    return sum(1 for g in ET.parse(path).getroot().iter() if g.get("id", "").startswith("ordex_curve_"))


def columns(path, prefix):
    header, _ = read_csv(path)
    return [h for h in header if h.startswith(prefix)]


def load_json(path):
    with open(path) as f:
        return json.load(f)


@pytest.fixture(scope="module")
def results(tmp_path_factory):
    """Every kind of result, written by the apps into a fresh folder."""
    d = str(tmp_path_factory.mktemp("kinds"))
    write_app_results(d)
    run(["ordex-gramian", "--model", os.path.join(DATA, "response_constant.toml"), "--from", 0, "--to", 2,
         "--samples", 11, "--csv", f"{d}/W.csv"])
    run(["ordex-respond", "--model", os.path.join(DATA, "response_pumped.toml"), "--input", f"{d}/steady.csv",
         "--x0", "0.2,0", "--csv", f"{d}/response.csv", "--json", f"{d}/respond.json"])
    return d


# The kinds: result file -> (labels the figure must show, expected number of curves: a number,
# or a function of the results' folder that reads it off the result).
KINDS = {
    # One curve a singular value: n of them for an n x n Phi (columns phi_i_j: n^2).
    "phi.csv": (["t", "singular values of Phi(t, t0)"], lambda d: int(round(len(columns(f"{d}/phi.csv", "phi_")) ** 0.5))),
    # The singular values of Phi(t1, t0), one curve over their index.
    "phi.json": (["index of the singular value", "singular values of Phi(t1, t0)"], 1),
    # The unit circle and the two axes (the multipliers are markers, not lines).
    "floquet.json": (["Re mu", "Im mu", "unit circle", "multipliers"], 3),
    "profile.csv": (["window start t", "lambda_min", "lambda_max"], 2),
    # The eigenvalues and the rank threshold.
    "profile.json": (["index (ascending)", "|eigenvalue|", "rank threshold"], 2),
    # One curve an entry of the m x n gain (the CSV's K_i_j columns).
    "K.csv": (["t", "gain K(t)  (u = -K x)"], lambda d: len(columns(f"{d}/K.csv", "K_"))),
    # The same schedule from the JSON summary, its entries named by input and state.
    "regulate.json": (["t", "K[f, x]", "K[f, v]"],
                      lambda d: len(load_json(f"{d}/regulate.json")["inputs"]) * len(load_json(f"{d}/regulate.json")["states"])),
    "P.csv": (["t", "entries of P(t)", "P_1_2"], lambda d: len(columns(f"{d}/P.csv", "P_"))),
    "W.csv": (["t", "entries of W(t)", "W_3_3"], lambda d: len(columns(f"{d}/W.csv", "W_"))),
    # One panel a column (states, then outputs), one run: a curve a column after t.
    "response.csv": (["t", "x1", "x2", "y"], lambda d: len(read_csv(f"{d}/response.csv")[0]) - 1),
    # The final state, one curve a run.
    "respond.json": (["x1", "x2", "x(t1)"], lambda d: len(load_json(f"{d}/respond.json")["runs"])),
    # |Phi_k| and |Phi(t_k, t_0)|.
    "discrete.csv": (["t", "largest singular value"], 2),
    "discrete.json": (["t", "largest singular value"], 2),
    # A chart over the grid: an image, no lines.
    "chart.csv": (["a", "q", "max_abs_multiplier"], 0),
    # Peak deviations and their mean (no run failed), final deviations and the linear gap.
    "simulate.json": (["run", "peak deviation", "deviation at t1"], 4),
    # One curve an entry of L(t): states x measurements.
    "estimate.json": (["t", "L[depth, depth_gauge]", "L[rate, rate_gyro]"],
                      lambda d: len(load_json(f"{d}/estimate.json")["states"]) * len(load_json(f"{d}/estimate.json")["outputs"])),
}


@pytest.fixture(scope="module")
def svgs(results):
    """ordex-plot RESULT -o RESULT.svg for every kind, the processes run side by side."""
    procs = {}
    for name in KINDS:
        out = os.path.join(results, name.replace(".", "_") + ".svg")
        procs[name] = (out, subprocess.Popen([PLOT, os.path.join(results, name), "-o", out],
                                             stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True))
    done = {}
    for name, (out, p) in procs.items():
        _, err = p.communicate(timeout=300)
        done[name] = (out, p.returncode, err)
    return done


@pytest.mark.parametrize("name", sorted(KINDS))
def test_svg_of_every_kind(name, results, svgs):
    out, status, err = svgs[name]
    assert status == 0, err
    assert os.path.getsize(out) > 1000
    texts = svg_texts(out)
    labels, curves = KINDS[name]
    for label in labels:
        assert label in texts, "%s: %r not among %r" % (name, label, texts)
    expected = curves(results) if callable(curves) else curves
    assert svg_curve_count(out) == expected


def test_png_of_every_kind(results, tmp_path):
    plot = load_plot_module()
    for name in KINDS:
        out = tmp_path / (name.replace(".", "_") + ".png")
        plot.save(plot.plot(os.path.join(results, name)), out, dpi=50)
        data = out.read_bytes()
        assert data.startswith(PNG_SIGNATURE), name
        assert len(data) > 1000, name
        import matplotlib.pyplot as plt
        plt.close("all")


def test_png_from_the_app(results):
    out = os.path.join(results, "gain.png")
    p = subprocess.run([PLOT, os.path.join(results, "K.csv"), "-o", out, "--dpi", "80"], capture_output=True, text=True,
                       timeout=120)
    assert p.returncode == 0, p.stderr
    with open(out, "rb") as f:
        assert f.read(8) == PNG_SIGNATURE
