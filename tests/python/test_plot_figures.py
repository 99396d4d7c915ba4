"""ordex.plot on real app output: each kind is recognised, and the drawn data are the file's
numbers (read back from the matplotlib Figure) and obey outside checks:
  - Liouville's formula det Phi(t, t0) = exp(int trace A) (= 1 for Mathieu's equation, trace 0):
    the product of the plotted singular values, and of the Floquet multipliers, is 1;
  - a constant plant's discrete model: the plotted growth |Phi(t_k, t_0)| is the 2-norm of
    scipy.linalg.expm(A (t_k - t0)) (scipy, an outside reference).
Run by ctest as plot_figures; the apps come from ORDEX_BIN_DIR."""
import json
import os
import tomllib
import xml.etree.ElementTree as ET

import numpy as np
import pytest
import scipy.linalg

from plot_support import DATA, load_plot_module, read_csv, run, write_app_results, write_input

plot = load_plot_module()


def lines_of(ax):
    return [(np.asarray(l.get_xdata(), float), np.asarray(l.get_ydata(), float), l.get_label()) for l in ax.get_lines()]


CONSTANT = os.path.join(DATA, "response_constant.toml")


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    """Every kind of result, written by the apps once for the module."""
    d = str(tmp_path_factory.mktemp("figures"))
    write_app_results(d)
    t = np.linspace(0, 6, 61)
    write_input(f"{d}/swept.csv", t, [np.sin(t), np.cos(2 * t)], ["t", "u1", "u2"])
    os.mkdir(f"{d}/runs")
    run(["ordex-respond", "--model", os.path.join(DATA, "response_pumped.toml"), "--input", f"{d}/steady.csv",
         "--input", f"{d}/swept.csv", "--x0", "0.2,0", "--csv", f"{d}/runs", "--json", f"{d}/respond.json"])
    return d


def path(folder, name):
    return os.path.join(folder, name)


def test_kinds_are_recognised(folder):
    expect = {"phi.csv": "transition", "phi.json": "transition", "floquet.json": "floquet",
              "profile.csv": "gramian_profile", "profile.json": "gramian", "K.csv": "gain_schedule",
              "regulate.json": "gain_schedule", "runs/steady.csv": "response", "respond.json": "response_summary",
              "discrete.csv": "discrete", "discrete.json": "discrete"}
    for name, kind in expect.items():
        assert plot.kind_of(path(folder, name)) == kind, name


def test_transition_singular_values_obey_liouville(folder):
    header, values = read_csv(path(folder, "phi.csv"))
    fig = plot.plot(path(folder, "phi.csv"))
    ax = fig.axes[0]
    lines = lines_of(ax)
    assert len(lines) == 2
    for x, _, _ in lines:
        np.testing.assert_array_equal(x, values[:, 0])
    # Liouville: |det Phi| = exp(int_0^t trace A) = 1 for x'' + k(t) x = 0 (trace A = 0), and
    # |det| is the product of the singular values.
    np.testing.assert_allclose(lines[0][1] * lines[1][1], 1.0, rtol=1e-6)
    assert ax.get_yscale() == "log"
    assert ax.get_xlabel() == "t"


def test_transition_entries(folder):
    header, values = read_csv(path(folder, "phi.csv"))
    ax = plot.plot(path(folder, "phi.csv"), entries=["1_1", "phi_2_1"]).axes[0]
    lines = lines_of(ax)
    assert [l[2] for l in lines] == ["phi_1_1", "phi_2_1"]
    np.testing.assert_array_equal(lines[0][1], values[:, header.index("phi_1_1")])
    np.testing.assert_array_equal(lines[1][1], values[:, header.index("phi_2_1")])
    # Mathieu with a = 1, q = 0.5 at t = 0: Phi = I; its entries start at the identity.
    assert lines[0][1][0] == 1.0
    assert lines[1][1][0] == 0.0


def test_floquet_unit_circle_and_multipliers(folder):
    with open(path(folder, "floquet.json")) as f:
        data = json.load(f)
    ax = plot.plot(path(folder, "floquet.json")).axes[0]
    circle = [l for l in ax.get_lines() if l.get_label() == "unit circle"]
    assert len(circle) == 1
    x, y = np.asarray(circle[0].get_xdata()), np.asarray(circle[0].get_ydata())
    np.testing.assert_allclose(np.hypot(x, y), 1.0, rtol=1e-12)
    assert np.ptp(np.arctan2(y, x)) > 6.2  # the whole circle
    points = ax.collections[0].get_offsets()
    mult = data["floquet"]["multipliers"]
    np.testing.assert_allclose(points[:, 0], [m["re"] for m in mult], rtol=0, atol=0)
    np.testing.assert_allclose(points[:, 1], [m["im"] for m in mult], rtol=0, atol=0)
    np.testing.assert_allclose(np.hypot(points[:, 0], points[:, 1]), [m["abs"] for m in mult], rtol=1e-12)
    # Liouville over one period: mu_1 mu_2 = det(monodromy) = 1 (trace A = 0).
    prod = complex(*points[0]) * complex(*points[1])
    assert round(abs(abs(prod) - 1.0), 6) == 0
    # q = 1.4, a = 1 lies in the first instability tongue of Mathieu's chart (Abramowitz &
    # Stegun fig. 20.1, recalled from memory): one multiplier outside the unit circle.
    assert max(np.hypot(points[:, 0], points[:, 1])) > 1.0
    assert not data["floquet"]["stable"]


def test_sweep_chart_is_the_table_on_its_grid(folder):
    with open(path(folder, "chart.csv")) as f:
        header = f.readline().strip().split(",")
        rows = [line.rstrip("\n").split(",") for line in f]
    assert header[-1] == "error"
    assert all(r[-1] == "" for r in rows)
    table = {name: np.array([float(r[i]) for r in rows]) for i, name in enumerate(header[:-1])}
    assert plot.kind_of(path(folder, "chart.csv")) == "sweep"
    fig = plot.plot(path(folder, "chart.csv"))
    ax = fig.axes[0]
    assert (ax.get_xlabel(), ax.get_ylabel()) == ("a", "q")
    mesh = ax.collections[0]
    # The grid's first parameter varies slowest: the chart's rows are q, its columns a.
    z = np.asarray(mesh.get_array()).reshape(4, 6)
    np.testing.assert_array_equal(z, np.asarray(table["max_abs_multiplier"]).reshape(6, 4).T)
    # Mathieu's equation (trace A = 0): det M = 1, so max |mu| >= 1 at every point, and q = 0
    # (the free oscillator) sits on the unit circle.
    assert np.all(z >= 1 - 1e-9)
    np.testing.assert_allclose(z[0], 1.0, atol=1e-7)


def test_simulate_runs_are_the_summary_numbers(folder):
    with open(path(folder, "simulate.json")) as f:
        data = json.load(f)
    assert plot.kind_of(data) == "simulate"
    top, bottom = plot.plot(path(folder, "simulate.json")).axes[:2]
    peak = top.get_lines()[0]
    np.testing.assert_array_equal(peak.get_xdata(), np.arange(1, 6))
    np.testing.assert_array_equal(peak.get_ydata(), [r["peak_deviation"] for r in data["runs"]])
    final, gap = bottom.get_lines()[:2]
    np.testing.assert_allclose(final.get_ydata(), [np.linalg.norm(r["dx_final"]) for r in data["runs"]],
                               rtol=1e-15)
    np.testing.assert_array_equal(gap.get_ydata(), [r["linear_gap"] for r in data["runs"]])
    # A peak deviation is at least the final one (the peak is over the run, the end included).
    assert np.all(peak.get_ydata() >= final.get_ydata() * (1 - 1e-12))


def test_filter_gain_schedule_from_the_estimator_json(folder):
    with open(path(folder, "estimate.json")) as f:
        data = json.load(f)
    assert plot.kind_of(data) == "gain_schedule"
    ax = plot.plot(path(folder, "estimate.json")).axes[0]
    L = np.array(data["gain_schedule"]["L"])
    lines = ax.get_lines()
    assert len(lines) == (L.shape[1] * L.shape[2])
    np.testing.assert_array_equal(lines[0].get_xdata(), data["gain_schedule"]["times"])
    np.testing.assert_array_equal(lines[0].get_ydata(), L[:, 0, 0])
    assert "L(t)" in ax.get_ylabel()


def test_gramian_profile_from_csv_and_json(folder):
    header, values = read_csv(path(folder, "profile.csv"))
    ax = plot.plot(path(folder, "profile.csv")).axes[0]
    lines = {l[2]: l for l in lines_of(ax)}
    np.testing.assert_array_equal(lines["lambda_min"][1], values[:, header.index("lambda_min")])
    np.testing.assert_array_equal(lines["lambda_max"][1], values[:, header.index("lambda_max")])
    np.testing.assert_array_equal(lines["lambda_min"][0], values[:, 0])
    assert "window" in ax.get_xlabel()
    # Every window has the length asked for, and lambda_min <= lambda_max.
    np.testing.assert_allclose(values[:, 1] - values[:, 0], 1500, rtol=1e-12)
    assert np.all(values[:, header.index("lambda_min")] <= values[:, header.index("lambda_max")])
    # The summary: the whole window's eigenvalues, ascending, as points.
    with open(path(folder, "profile.json")) as f:
        data = json.load(f)
    points = plot.plot(data).axes[0].get_lines()[0]
    np.testing.assert_array_equal(points.get_ydata(), np.abs(data["eigenvalues"]))
    np.testing.assert_array_equal(points.get_xdata(), np.arange(1, 7))


def test_gain_schedule_labels_and_data(folder):
    header, values = read_csv(path(folder, "K.csv"))
    ax = plot.plot(path(folder, "K.csv")).axes[0]
    lines = lines_of(ax)
    assert [l[2] for l in lines] == (header[1:])
    for (x, y, _), j in zip(lines, range(1, len(header))):
        np.testing.assert_array_equal(x, values[:, 0])
        np.testing.assert_array_equal(y, values[:, j])
    with open(path(folder, "regulate.json")) as f:
        data = json.load(f)
    ax = plot.plot(data).axes[0]
    names = ["K[%s, %s]" % (u, x) for u in data["inputs"] for x in data["states"]]
    assert [l.get_label() for l in ax.get_lines()] == names
    np.testing.assert_allclose(ax.get_lines()[0].get_ydata(), values[:, 1], rtol=1e-15)


def test_responses_overlaid(folder):
    runs = [path(folder, "runs/steady.csv"), path(folder, "runs/swept.csv")]
    fig = plot.plot(runs)
    header, first = read_csv(runs[0])
    _, second = read_csv(runs[1])
    assert header == ["t", "x1", "x2", "y"]  # states then outputs, the model's names
    assert [ax.get_ylabel() for ax in fig.axes] == (header[1:])
    for j, ax in enumerate(fig.axes, start=1):
        lines = lines_of(ax)
        assert len(lines) == 2
        np.testing.assert_array_equal(lines[0][1], first[:, j])
        np.testing.assert_array_equal(lines[1][1], second[:, j])
    assert fig.axes[0].get_lines()[0].get_ydata()[0] == 0.2  # x1(0) = --x0
    labelled = plot.plot_responses(runs[0], units={"t": "s", "x1": "m"})
    assert [ax.get_ylabel() for ax in labelled.axes] == ["x1 [m]", "x2", "y"]
    assert labelled.axes[-1].get_xlabel() == "t [s]"
    with open(path(folder, "regulate.json")) as f:
        summary = json.load(f)
    assert plot.plot(summary).axes[0].get_xlabel() == "t"
    summary["model"]["units"] = {"t": "s"}  # units declared in a summary's header label the axes
    assert plot.plot(summary).axes[0].get_xlabel() == "t [s]"
    one = plot.plot(runs[0], columns=["y"])
    assert len(one.axes) == 1
    assert one.axes[0].get_ylabel() == "y"


def test_discrete_growth_matches_expm(folder):
    with open(CONSTANT, "rb") as f:
        A = np.array(tomllib.load(f)["matrices"]["A"], float)
    for source in ("discrete.csv", "discrete.json"):
        ax = plot.plot(path(folder, source)).axes[0]
        total = [l for l in ax.get_lines() if l.get_label().startswith("|Phi(t_k")][0]
        step = [l for l in ax.get_lines() if l.get_label().startswith("|Phi_k|")][0]
        t = np.asarray(total.get_xdata())
        np.testing.assert_allclose(t, np.arange(1, 17) * 0.25, rtol=1e-14)
        # Outside reference: scipy's matrix exponential of the constant plant.
        expect = [np.linalg.norm(scipy.linalg.expm(A * tk), 2) for tk in t]
        np.testing.assert_allclose(total.get_ydata(), expect, rtol=1e-7)
        one_step = np.linalg.norm(scipy.linalg.expm(A * 0.25), 2)
        np.testing.assert_allclose(step.get_ydata(), one_step, rtol=1e-7)


def test_figure_files(folder):
    signatures = {"png": b"\x89PNG\r\n\x1a\n", "pdf": b"%PDF"}
    for fmt in ("svg", "png", "pdf"):
        out = path(folder, "floquet." + fmt)
        plot.save(plot.plot(path(folder, "floquet.json")), out)
        with open(out, "rb") as f:
            data = f.read()
        assert len(data) > 1000
        if fmt == "svg":
            root = ET.fromstring(data)
            assert root.tag.endswith("svg")
            texts = " ".join("".join(e.itertext()) for e in root.iter() if e.tag.endswith("text"))
            assert "Re mu" in texts  # text kept as text: labels are searchable
            assert "Im mu" in texts
        else:
            assert data.startswith(signatures[fmt])
    assert [f for f in os.listdir(folder) if f.endswith(".tmp")] == []


def test_bad_input_is_one_line(folder):
    bad = path(folder, "bad.csv")
    with open(bad, "w") as f:
        f.write("alpha,beta\n1,2\n")
    with pytest.raises(plot.PlotInputError) as e:
        plot.plot(bad)
    assert bad in str(e.value)
    assert "\n" not in str(e.value)
    with open(bad, "w") as f:
        f.write("t,x\n0,1\n1,oops\n")
    with pytest.raises(plot.PlotInputError, match=r"bad\.csv:3: 'oops' is not a number"):
        plot.plot(bad)
    with pytest.raises(plot.PlotInputError, match="not an ordex result"):
        plot.plot({"app": "something", "value": 1})
    with pytest.raises(plot.PlotInputError, match="no entry"):
        plot.plot(path(folder, "phi.csv"), entries=["3_3"])
    with pytest.raises(plot.PlotInputError, match=r"\.svg, \.png or \.pdf"):
        plot.save(plot.plot(path(folder, "phi.csv")), path(folder, "figure.jpg"))
    with pytest.raises(plot.PlotInputError, match="input of this run"):
        plot.save(plot.plot(path(folder, "phi.csv")), path(folder, "phi.csv"), inputs=[path(folder, "phi.csv")])
