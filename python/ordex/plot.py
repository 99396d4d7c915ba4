"""Figures of ordex results: the natural picture of each app's JSON summary or CSV.

Pure Python on numpy and matplotlib; it reads the files the apps write and never needs the
compiled extension, so it works on results copied from another machine.

    from ordex import plot
    fig = plot.plot("phi.csv")               # recognises the kind of result
    plot.save(fig, "phi.svg")                 # atomic; refuses to overwrite an input

Every function takes a result -- a dict loaded from an app's JSON, a path to a JSON or CSV file,
or a ``Table`` -- and returns a ``matplotlib.figure.Figure`` (no pyplot, no global backend: a
figure is drawn with the Agg canvas, and a notebook shows it as it shows any Figure).
``Figure`` objects are made with ``layout="constrained"`` (matplotlib 3.5 or later).

Kinds (``kind_of``), recognised by the JSON keys or the CSV header:

=================  ==============================================  ===========================
kind               from                                            figure
=================  ==============================================  ===========================
transition         ordex-propagate --csv (t,phi_1_1,...), JSON     singular values of Phi (or
                                                                   chosen entries) over time
floquet            ordex-propagate --floquet JSON (``floquet``)    multipliers, unit circle
gramian_profile    ordex-gramian --window-length --csv             lambda_min, lambda_max of
                                                                   each window
gramian            ordex-gramian JSON (``eigenvalues``)            the eigenvalues of the
                                                                   whole window
gain_schedule      ordex-regulate --csv (t,K_1_1,...) or JSON      entries of K(t)
matrix_series      other t,PREFIX_i_j CSV (P of --p-csv, W(t0,t))  entries over time
discrete           ordex-discretize CSV (k,t_start,...) or JSON    step growth
simulate           ordex-simulate JSON (``runs`` with peak_deviation)  per run: peak and final
                                                                   deviation, linear gap
sweep              ordex-sweep --csv (parameters,...,error)        a chart over two parameters
                                                                   (--columns picks the figure)
response           t,<names> CSV (ordex-respond, inputs, runs)     the columns over time,
                                                                   several runs overlaid
response_summary   ordex-respond JSON (``runs``)                   final states of each run
=================  ==============================================  ===========================

Errors in the input raise ``PlotInputError`` (a ``ValueError``) with one line naming the file.
"""

import csv
import json
import math
import os
import re
import tempfile

import numpy as np

__all__ = [
    "PlotInputError", "Table", "load", "kind_of", "plot", "save",
    "plot_transition", "plot_floquet", "plot_gramian_profile", "plot_gramian",
    "plot_gain_schedule", "plot_matrix_series", "plot_discrete_growth", "plot_responses",
    "plot_response_summary", "check_output", "discrete_growth", "FIGURE_FORMATS",
]

FIGURE_FORMATS = ("svg", "png", "pdf")

_MATRIX_COLUMN = re.compile(r"^([A-Za-z][A-Za-z0-9]*)_([0-9]+)_([0-9]+)$")
_PROFILE_HEADER = ["t_start", "t_end", "lambda_min", "lambda_max", "condition", "rank"]


class PlotInputError(ValueError):
    """A result that cannot be read or recognised; the message is one line naming the file."""


class Table:
    """A CSV result: its column names and values (rows x columns), and where it came from."""

    def __init__(self, header, values, source="<table>"):
        self.header = list(header)
        self.values = np.asarray(values, dtype=float).reshape(-1, len(self.header))
        self.source = source

    def column(self, name):
        return self.values[:, self.header.index(name)]

    def __repr__(self):
        return "Table(%r, %d rows, columns %s)" % (self.source, len(self.values), ",".join(self.header[:6]))


# ---- reading ---------------------------------------------------------------------------------

def _read_csv(path):
    rows, header, header_line = [], None, 0
    try:
        with open(path, newline="", encoding="utf-8-sig") as f:
            for lineno, fields in enumerate(csv.reader(f), start=1):
                if not fields or not "".join(fields).strip() or fields[0].lstrip().startswith("#"):
                    continue
                fields = [x.strip() for x in fields]
                if fields and fields[-1] == "" and (header is None or len(fields) == len(header) + 1):
                    fields = fields[:-1]  # a spreadsheet's trailing separator
                if header is None:
                    header, header_line = fields, lineno
                    continue
                if len(fields) != len(header):
                    raise PlotInputError("%s:%d: %d fields, the header has %d" % (path, lineno, len(fields), len(header)))
                if header[-1] == "error":
                    # An ordex-sweep table: its last column is the point's error text (empty when
                    # the point succeeded); kept as 0 (succeeded) or 1 (failed).
                    fields = fields[:-1] + ["1" if fields[-1] else "0"]
                try:
                    rows.append([float(x) for x in fields])
                except ValueError:
                    bad = next(x for x in fields if not _is_number(x))
                    raise PlotInputError("%s:%d: %r is not a number" % (path, lineno, bad[:40])) from None
    except UnicodeDecodeError:
        raise PlotInputError("%s: not a text file (CSV or JSON expected)" % path) from None
    if header is None:
        raise PlotInputError("%s: empty file, no CSV header" % path)
    if not rows:
        raise PlotInputError("%s:%d: a header and no data rows" % (path, header_line))
    return Table(header, rows, path)


def _is_number(text):
    try:
        float(text)
        return True
    except ValueError:
        return False


def load(result):
    """The result as a dict (JSON summary) or a Table (CSV). RESULT: a dict, a Table, or a path;
    a path whose text starts with '{' is JSON, anything else CSV."""
    if isinstance(result, (dict, Table)):
        return result
    path = os.fspath(result)
    if os.path.isdir(path):
        raise PlotInputError("%s: a folder, not a result file (give its CSV files)" % path)
    try:
        with open(path, "rb") as f:
            head = f.read(4096)
    except OSError as e:
        raise PlotInputError("%s: %s" % (path, e.strerror or e)) from None
    if head.lstrip(b"\xef\xbb\xbf \t\r\n").startswith(b"{"):
        try:
            with open(path, encoding="utf-8") as f:
                data = json.load(f)
        except (ValueError, UnicodeDecodeError) as e:
            raise PlotInputError("%s: not valid JSON (%s)" % (path, str(e).splitlines()[0])) from None
        data.setdefault("_source", path)
        return data
    if b"\0" in head:
        raise PlotInputError("%s: not a text file (CSV or JSON expected)" % path)
    return _read_csv(path)


def _source(r):
    return r.source if isinstance(r, Table) else r.get("_source", r.get("app", "<result>"))


def _matrix_prefix(header):
    """PREFIX when every column of HEADER is PREFIX_i_j (a full row-major matrix), else None."""
    prefixes, cells = set(), set()
    for name in header:
        m = _MATRIX_COLUMN.match(name)
        if not m:
            return None
        prefixes.add(m.group(1))
        cells.add((int(m.group(2)), int(m.group(3))))
    if len(prefixes) != 1:
        return None
    rows = max(i for i, _ in cells)
    cols = max(j for _, j in cells)
    return prefixes.pop() if len(cells) == rows * cols == len(header) else None


def kind_of(result):
    """The kind of RESULT (see the module's table); PlotInputError when it is none of them."""
    r = load(result)
    if isinstance(r, Table):
        h = r.header
        if h[:3] == ["k", "t_start", "t_end"] and len(h) > 3 and h[3] == "phi_1_1":
            return "discrete"
        if h == _PROFILE_HEADER:
            return "gramian_profile"
        if h[-1] == "error" and len(h) >= 3:
            return "sweep"
        if h[0] == "t" and len(h) > 1:
            prefix = _matrix_prefix(h[1:])
            if prefix == "phi":
                return "transition"
            if prefix == "K":
                return "gain_schedule"
            if prefix is not None:
                return "matrix_series"
            return "response"
        raise PlotInputError("%s: header '%s' is not one of an ordex result (t,..., k,t_start,t_end,..., or "
                             "t_start,t_end,lambda_min,...)" % (r.source, ",".join(h)[:80]))
    if not isinstance(r, dict):
        raise PlotInputError("%s: a JSON summary is an object" % _source(r))
    if isinstance(r.get("floquet"), dict) and "multipliers" in r["floquet"] and "gain_schedule" not in r:
        return "floquet"
    if isinstance(r.get("gain_schedule"), dict):
        return "gain_schedule"
    if isinstance(r.get("profile"), dict) and isinstance(r["profile"].get("windows"), list):
        return "gramian_profile"
    if "eigenvalues" in r and "gramian" in r:
        return "gramian"
    if "times" in r and isinstance(r.get("phi"), list) and ("gamma" in r or "gamma0" in r):
        return "discrete"
    if isinstance(r.get("runs"), list) and r["runs"] and isinstance(r["runs"][0], dict) \
            and "peak_deviation" in r["runs"][0]:
        return "simulate"
    if isinstance(r.get("runs"), list) and "outputs" in r:
        return "response_summary"
    if isinstance(r.get("phi"), list) and "states" in r:
        return "transition"
    raise PlotInputError("%s: not an ordex result this version can draw (no phi, floquet, gain_schedule, "
                         "profile, eigenvalues or runs)" % _source(r))


# ---- labels ----------------------------------------------------------------------------------

def _units(r):
    """Units declared in the summary's header (a dict name -> unit under 'units' or model.units)."""
    if not isinstance(r, dict):
        return {}
    u = r.get("units") or (r.get("model") or {}).get("units") or {}
    return u if isinstance(u, dict) else {}


def _label(name, units):
    unit = units.get(name)
    return "%s [%s]" % (name, unit) if unit else name


def _title(r, what):
    if isinstance(r, dict):
        model = r.get("model") or {}
        title = model.get("title") or model.get("source") or ""
        return "%s: %s" % (what, title) if title else what
    return "%s (%s)" % (what, os.path.basename(r.source))


def _new_figure(rows=1, cols=1, size=(7.0, 4.2)):
    # matplotlib is imported when a figure is made: reading and recognising a result (and
    # refusing a bad one) stays quick.
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure
    fig = Figure(figsize=size, layout="constrained")
    FigureCanvasAgg(fig)
    axes = fig.subplots(rows, cols, squeeze=False)
    return fig, axes


def _time_label(r):
    return _label("t", _units(r))


def _number(x):
    return math.nan if x is None else float(x)


def _entries_of(names, prefix, entries, source):
    """Indices into NAMES (PREFIX_i_j columns) of ENTRIES: 'I_J' or full column names."""
    chosen = []
    for e in entries:
        e = str(e).strip()
        name = e if e.startswith(prefix + "_") else "%s_%s" % (prefix, e.replace(",", "_").replace(".", "_"))
        if name not in names:
            raise PlotInputError("%s: no entry %r (columns %s_1_1 ... %s)" % (source, e, prefix, names[-1]))
        chosen.append(names.index(name))
    return chosen


# ---- the figures -----------------------------------------------------------------------------

def plot_transition(result, entries=None):
    """Phi(t, t0) over time: its singular values (log scale), or with ENTRIES (e.g. ['1_1', '2_1'])
    those entries. From ordex-propagate's CSV; its JSON (Phi at t1 only) gives the singular values
    of Phi(t1, t0) as points."""
    r = load(result)
    fig, ax = _new_figure()
    ax = ax[0, 0]
    if isinstance(r, Table):
        t = r.values[:, 0]
        n = int(round(math.sqrt(len(r.header) - 1)))
        if entries:
            for i in _entries_of(r.header[1:], "phi", entries, r.source):
                ax.plot(t, r.values[:, 1 + i], label=r.header[1 + i])
            ax.set_ylabel("entries of Phi(t, t0)")
        else:
            mats = r.values[:, 1:].reshape(len(t), n, n)
            sv = np.linalg.svd(mats, compute_uv=False)
            for k in range(n):
                ax.plot(t, sv[:, k], label="sigma_%d" % (k + 1))
            ax.set_yscale("log")
            ax.set_ylabel("singular values of Phi(t, t0)")
        ax.set_xlabel(_time_label(r))
    else:
        phi = np.array(r["phi"], dtype=float)
        sv = np.linalg.svd(phi, compute_uv=False)
        ax.plot(np.arange(1, len(sv) + 1), sv, "o", label="Phi(t1, t0) at t1 = %s" % r.get("t1"))
        ax.set_yscale("log")
        ax.set_xlabel("index of the singular value")
        ax.set_ylabel("singular values of Phi(t1, t0)")
    ax.legend(fontsize="small", ncol=2)
    ax.grid(True, alpha=0.3)
    ax.set_title(_title(r, "transition matrix"))
    return fig


def plot_floquet(result):
    """The Floquet multipliers in the complex plane with the unit circle (inside: decaying)."""
    r = load(result)
    if isinstance(r, Table):
        raise PlotInputError("%s: Floquet multipliers are in the JSON summary (ordex-propagate --floquet --json)" % r.source)
    fq = r["floquet"]
    re_ = np.array([_number(m.get("re")) for m in fq["multipliers"]])
    im_ = np.array([_number(m.get("im")) for m in fq["multipliers"]])
    fig, ax = _new_figure(size=(5.5, 5.5))
    ax = ax[0, 0]
    theta = np.linspace(0.0, 2.0 * np.pi, 721)
    ax.plot(np.cos(theta), np.sin(theta), "-", color="0.5", lw=1, label="unit circle")
    ax.scatter(re_, im_, marker="x", s=60, color="C3", zorder=3, label="multipliers")
    ax.axhline(0, color="0.8", lw=0.8)
    ax.axvline(0, color="0.8", lw=0.8)
    ax.set_aspect("equal", adjustable="datalim")
    ax.set_xlabel("Re mu")
    ax.set_ylabel("Im mu")
    verdict = "stable" if fq.get("stable") else "not asymptotically stable"
    ax.set_title("%s\nperiod %.6g, %s" % (_title(r, "Floquet multipliers"), _number(fq.get("period")), verdict))
    ax.legend(fontsize="small", loc="upper right")
    return fig


def plot_gramian_profile(result):
    """Smallest and largest Gramian eigenvalue of each sliding window, at the window's start."""
    r = load(result)
    if isinstance(r, Table):
        t0, t1 = r.column("t_start"), r.column("t_end")
        lo, hi = r.column("lambda_min"), r.column("lambda_max")
        length = None
    else:
        w = r["profile"]["windows"]
        t0 = np.array([_number(x["t_start"]) for x in w])
        t1 = np.array([_number(x["t_end"]) for x in w])
        lo = np.array([_number(x["lambda_min"]) for x in w])
        hi = np.array([_number(x["lambda_max"]) for x in w])
        length = r["profile"].get("window_length")
    fig, ax = _new_figure()
    ax = ax[0, 0]
    ax.plot(t0, hi, ".-", label="lambda_max")
    ax.plot(t0, lo, ".-", label="lambda_min")
    positive = np.concatenate([lo[lo > 0], hi[hi > 0]])
    if positive.size and positive.max() / positive.min() > 100:
        ax.set_yscale("log")
    ax.set_xlabel("window start " + _time_label(r))
    ax.set_ylabel("Gramian eigenvalue of [t_start, t_end]")
    if length is None and len(t0):
        length = t1[0] - t0[0]
    ax.set_title("%s\nwindows of length %.6g" % (_title(r, "Gramian over sliding windows"), length))
    ax.legend(fontsize="small")
    ax.grid(True, alpha=0.3)
    return fig


def plot_gramian(result):
    """The Gramian's eigenvalues (ascending, log scale) against the rank threshold."""
    r = load(result)
    ev = np.array([_number(x) for x in r["eigenvalues"]])
    fig, ax = _new_figure()
    ax = ax[0, 0]
    ax.plot(np.arange(1, len(ev) + 1), np.abs(ev), "o", label="|eigenvalue|")
    thr = r.get("rank_threshold")
    if thr:
        ax.axhline(thr, color="C3", ls="--", lw=1, label="rank threshold")
    ax.set_yscale("log")
    ax.set_xlabel("index (ascending)")
    ax.set_ylabel("%s Gramian eigenvalue" % r.get("kind", ""))
    ax.set_title(_title(r, "Gramian over [%s, %s]" % (r.get("t0"), r.get("t1"))))
    ax.legend(fontsize="small")
    ax.grid(True, alpha=0.3)
    return fig


def _matrix_lines(ax, t, values, header, prefix, entries, source, row_names=None, col_names=None):
    idx = _entries_of(header, prefix, entries, source) if entries else range(len(header))
    for i in idx:
        m = _MATRIX_COLUMN.match(header[i])
        a, b = int(m.group(2)), int(m.group(3))
        if row_names and col_names and a <= len(row_names) and b <= len(col_names):
            label = "%s[%s, %s]" % (prefix, row_names[a - 1], col_names[b - 1])
        else:
            label = header[i]
        ax.plot(t, values[:, i], label=label)


def plot_gain_schedule(result, entries=None):
    """The gain schedule K(t) of u = -K(t) x: each entry (or ENTRIES such as ['1_2']) over time,
    labelled K[input, state] when the summary names them."""
    r = load(result)
    fig, ax = _new_figure()
    ax = ax[0, 0]
    if isinstance(r, Table):
        _matrix_lines(ax, r.values[:, 0], r.values[:, 1:], r.header[1:], "K", entries, r.source)
        ylabel = "gain K(t)  (u = -K x)"
    else:
        gs = r["gain_schedule"]
        # A regulator's K (inputs x states) or an estimator's L (states x outputs).
        key = "K" if "K" in gs else "L"
        t = np.array(gs["times"], dtype=float)
        K = np.array([[[_number(x) for x in row] for row in k] for k in gs[key]], dtype=float)
        m, n = K.shape[1], K.shape[2]
        header = ["%s_%d_%d" % (key, i + 1, j + 1) for i in range(m) for j in range(n)]
        rows, cols = (r.get("inputs"), r.get("states")) if key == "K" else (r.get("states"), r.get("outputs"))
        _matrix_lines(ax, t, K.reshape(len(t), m * n), header, key, entries, _source(r), rows, cols)
        ylabel = "gain K(t)  (u = -K x)" if key == "K" else "filter gain L(t)  (x' = ... + L (y - C x))"
    ax.set_xlabel(_time_label(r))
    ax.set_ylabel(ylabel)
    ax.set_title(_title(r, "gain schedule"))
    ax.legend(fontsize="small", ncol=2)
    ax.grid(True, alpha=0.3)
    return fig


def plot_matrix_series(result, entries=None):
    """Entries of any t,PREFIX_i_j matrix series (P(t) of --p-csv, the running Gramian W(t0, t))."""
    r = load(result)
    prefix = _matrix_prefix(r.header[1:])
    fig, ax = _new_figure()
    ax = ax[0, 0]
    _matrix_lines(ax, r.values[:, 0], r.values[:, 1:], r.header[1:], prefix, entries, r.source)
    ax.set_xlabel("t")
    ax.set_ylabel("entries of %s(t)" % prefix)
    ax.set_title(_title(r, "%s over time" % prefix))
    ax.legend(fontsize="small", ncol=2)
    ax.grid(True, alpha=0.3)
    return fig


def _discrete_steps(r):
    """(t_start, t_end, Phi_k stack) of a discrete model (CSV or JSON)."""
    if isinstance(r, Table):
        t_start, t_end = r.column("t_start"), r.column("t_end")
        cols = [i for i, h in enumerate(r.header) if h.startswith("phi_")]
        n = int(round(math.sqrt(len(cols))))
        return t_start, t_end, r.values[:, cols].reshape(len(t_start), n, n)
    times = np.array(r["times"], dtype=float)
    phi = np.array([[[_number(x) for x in row] for row in p] for p in r["phi"]], dtype=float)
    return times[:-1], times[1:], phi


def discrete_growth(result):
    """(t_end, step, total): the largest singular value of each step Phi_k and of the product
    Phi_k ... Phi_0 = Phi(t_{k+1}, t_0), renormalised as it goes (no overflow)."""
    r = load(result)
    t_start, t_end, phi = _discrete_steps(r)
    step = np.linalg.svd(phi, compute_uv=False)[:, 0]
    total = np.empty(len(phi))
    product = np.eye(phi.shape[1])
    log_scale = 0.0
    for k in range(len(phi)):
        product = phi[k] @ product
        norm = np.linalg.norm(product)
        if norm > 0 and np.isfinite(norm):
            product /= norm
            log_scale += math.log(norm)
        total[k] = math.exp(log_scale) * np.linalg.svd(product, compute_uv=False)[0]
    return t_end, step, total


def plot_discrete_growth(result):
    """The discrete model's step growth: |Phi_k| of each interval and |Phi(t_k, t_0)| of the
    product over the grid (largest singular values, log scale)."""
    r = load(result)
    t_end, step, total = discrete_growth(r)
    fig, ax = _new_figure()
    ax = ax[0, 0]
    ax.plot(t_end, total, "-", label="|Phi(t_k, t_0)|: the product of the steps")
    ax.plot(t_end, step, ".", ms=3, label="|Phi_k|: one step, at its end")
    ax.set_yscale("log")
    ax.set_xlabel(_time_label(r))
    ax.set_ylabel("largest singular value")
    ax.set_title(_title(r, "discrete model: growth over %d intervals" % len(step)))
    ax.legend(fontsize="small")
    ax.grid(True, alpha=0.3)
    return fig


def plot_responses(results, columns=None, names=None, units=None):
    """Time series t,<names> (ordex-respond's CSV: states then outputs; an input history; a
    closed-loop run) over time, one panel a column, several runs (a list of results) overlaid.
    COLUMNS picks columns by name; NAMES labels the runs (default: the file names); UNITS maps
    column names (and t) to units for the axis labels."""
    units = units or {}
    if isinstance(results, (dict, Table, str, os.PathLike)):
        results = [results]
    tables = [load(x) for x in results]
    for tab in tables:
        if not isinstance(tab, Table) or tab.header[0] != "t":
            raise PlotInputError("%s: a response is a CSV t,<names>" % _source(tab))
    header = tables[0].header
    for tab in tables[1:]:
        if tab.header != header:
            raise PlotInputError("%s: columns %s differ from %s's" % (tab.source, ",".join(tab.header)[:60],
                                                                      tables[0].source))
    cols = list(columns) if columns else header[1:]
    for c in cols:
        if c not in header[1:]:
            raise PlotInputError("%s: no column %r (columns %s)" % (tables[0].source, c, ",".join(header[1:])[:80]))
    if names is None:
        names = [os.path.splitext(os.path.basename(tab.source))[0] for tab in tables]
    fig, axes = _new_figure(len(cols), 1, size=(7.0, min(2.0 + 1.6 * len(cols), 24.0)))
    for a, c in enumerate(cols):
        ax = axes[a, 0]
        for k, tab in enumerate(tables):
            ax.plot(tab.values[:, 0], tab.column(c), color="C%d" % (k % 10), label=names[k])
        ax.set_ylabel(_label(c, units))
        ax.grid(True, alpha=0.3)
        if a == 0:
            ax.set_title("time series: %s" % os.path.basename(tables[0].source) if len(tables) == 1
                         else "responses: %d runs" % len(tables))
            if len(tables) > 1:
                ax.legend(fontsize="small")
    axes[-1, 0].set_xlabel(_label("t", units))
    return fig


def plot_response_summary(result):
    """ordex-respond's summary holds final values only: x_final of each run, state by state."""
    r = load(result)
    states = r.get("states") or []
    fig, ax = _new_figure()
    ax = ax[0, 0]
    for k, run in enumerate(r["runs"]):
        x = np.array([_number(v) for v in run["x_final"]])
        ax.plot(np.arange(len(x)), x, "o", label=os.path.basename(str(run.get("input") or "run %d" % (k + 1))))
    ax.set_xticks(np.arange(len(states)))
    ax.set_xticklabels([_label(x, _units(r)) for x in states], rotation=45 if len(states) > 6 else 0)
    ax.set_ylabel("x(t1)")
    ax.set_title(_title(r, "final states (the time series are in --csv)"))
    ax.legend(fontsize="small")
    ax.grid(True, alpha=0.3)
    return fig


def plot_simulate(result):
    """ordex-simulate's summary: per run, the peak deviation from the nominal (top) and the final
    deviation beside the gap to the linear prediction (bottom, log scale); failed runs marked."""
    r = load(result)
    runs = r["runs"]
    k = np.arange(1, len(runs) + 1)
    ok = np.array([bool(x.get("ok", True)) for x in runs])
    peak = np.array([_number(x.get("peak_deviation")) if x.get("ok", True) else np.nan for x in runs])
    final = np.array([np.linalg.norm([_number(v) for v in x["dx_final"]]) if x.get("ok", True) else np.nan
                      for x in runs])
    gap = np.array([_number(x.get("linear_gap")) if x.get("ok", True) else np.nan for x in runs])
    fig, axes = _new_figure(rows=2, size=(7.0, 6.0))
    top, bottom = axes[0, 0], axes[1, 0]
    top.plot(k, peak, "o", ms=3, label="peak |x - x_nom|")
    if ok.any():
        top.axhline(np.nanmean(peak), color="0.4", lw=1, label="mean")
    if (~ok).any():
        top.plot(k[~ok], np.zeros((~ok).sum()), "rx", label="failed run")
    top.set_ylabel("peak deviation")
    top.legend(fontsize="small")
    top.grid(True, alpha=0.3)
    bottom.semilogy(k, final, "o", ms=3, label="|x(t1) - x_nom(t1)|")
    bottom.semilogy(k, gap, "s", ms=3, label="gap to the linear prediction")
    bottom.set_xlabel("run")
    bottom.set_ylabel("deviation at t1")
    bottom.legend(fontsize="small")
    bottom.grid(True, alpha=0.3)
    top.set_title(_title(r, "%d nonlinear runs (%d failed)" % (len(runs), int((~ok).sum()))))
    return fig


def plot_sweep(result, figure=None):
    """An ordex-sweep table: over two parameters (the first two columns), a chart of FIGURE (a key
    figure column; default max_abs_multiplier for a Floquet sweep, else the first figure) with
    the failed points marked; over one parameter, FIGURE against it. The unit-modulus contour is
    drawn on a Floquet chart (inside: every multiplier decays)."""
    r = load(result)
    h = r.header
    if figure is None:
        figure = "max_abs_multiplier" if "max_abs_multiplier" in h else None
    params = []
    for c in h[:-1]:
        # The parameters come first: columns before the first key figure (sweep tables list
        # them in grid order, the last varying fastest).
        if c == figure or c in ("max_abs_multiplier", "stable", "rank", "lambda_min", "p0_max_eigenvalue",
                                "runs_completed") or c.startswith("final_"):
            break
        params.append(c)
    if not params:
        raise PlotInputError("%s: no parameter columns before the key figures" % r.source)
    if figure is None:
        rest = [c for c in h[len(params):-1]]
        if not rest:
            raise PlotInputError("%s: no key figure columns" % r.source)
        figure = rest[0]
    if figure not in h:
        raise PlotInputError("%s: no column %r (columns: %s)" % (r.source, figure, ",".join(h)))
    z = r.column(figure)
    failed = r.column("error") > 0
    fig, ax = _new_figure(size=(6.5, 5.0))
    ax = ax[0, 0]
    if len(params) >= 2:
        x, y = r.column(params[0]), r.column(params[1])
        xs, ys = np.unique(x), np.unique(y)
        if len(xs) * len(ys) == len(z) and len(xs) > 1 and len(ys) > 1:
            # A full grid: the first parameter varies slowest.
            grid = z.reshape(len(xs), len(ys)).T
            mesh = ax.pcolormesh(xs, ys, grid, shading="nearest", cmap="viridis")
            fig.colorbar(mesh, ax=ax, label=figure)
            if figure == "max_abs_multiplier" and np.nanmin(grid) < 1 < np.nanmax(grid):
                ax.contour(xs, ys, grid, levels=[1.0], colors="w", linewidths=1.5)
        else:
            sc = ax.scatter(x, y, c=z, cmap="viridis", s=30)
            fig.colorbar(sc, ax=ax, label=figure)
        if failed.any():
            ax.scatter(x[failed], y[failed], marker="x", color="r", s=40, label="failed point")
            ax.legend(fontsize="small")
        ax.set_xlabel(params[0])
        ax.set_ylabel(params[1])
    else:
        x = r.column(params[0])
        ax.plot(x[~failed], z[~failed], ".-", label=figure)
        if failed.any():
            ax.plot(x[failed], np.zeros(failed.sum()), "rx", label="failed point")
        ax.set_xlabel(params[0])
        ax.set_ylabel(figure)
        ax.grid(True, alpha=0.3)
        ax.legend(fontsize="small")
    ax.set_title("%s\n%s over %s" % (os.path.basename(r.source), figure, " x ".join(params[:2])))
    return fig


_PLOTTERS = {
    "sweep": plot_sweep,
    "simulate": plot_simulate,
    "transition": plot_transition,
    "floquet": plot_floquet,
    "gramian_profile": plot_gramian_profile,
    "gramian": plot_gramian,
    "gain_schedule": plot_gain_schedule,
    "matrix_series": plot_matrix_series,
    "discrete": plot_discrete_growth,
    "response": plot_responses,
    "response_summary": plot_response_summary,
}


def plot(result, entries=None, columns=None):
    """The natural figure of RESULT (or of a list of response CSVs, overlaid). ENTRIES picks
    matrix entries ('I_J') of a transition matrix, gain or matrix series; COLUMNS the columns
    of a response."""
    if isinstance(result, (list, tuple)):
        results = [load(x) for x in result]
        if not results:
            raise PlotInputError("no result given")
        if len(results) > 1:
            for x in results:
                if kind_of(x) != "response":
                    raise PlotInputError("%s: only responses (t,<names> CSV) are overlaid; give one result of kind %s"
                                         % (_source(x), kind_of(x)))
            return plot_responses(results, columns=columns)
        result = results[0]
    r = load(result)
    kind = kind_of(r)
    try:
        if kind == "response":
            return plot_responses([r], columns=columns)
        if kind in ("transition", "gain_schedule", "matrix_series"):
            return _PLOTTERS[kind](r, entries=entries)
        if kind == "sweep":
            return plot_sweep(r, figure=columns[0] if columns else None)
        if entries:
            raise PlotInputError("%s: entries are for matrix series, not a %s result" % (_source(r), kind))
        if columns:
            raise PlotInputError("%s: columns are for responses, not a %s result" % (_source(r), kind))
        return _PLOTTERS[kind](r)
    except (KeyError, TypeError, IndexError) as e:
        raise PlotInputError("%s: a %s result with a missing or malformed part (%s)" % (_source(r), kind, e)) from None


def check_output(path, inputs=()):
    """Raises PlotInputError unless PATH can take a figure: a .svg, .png or .pdf name in an
    existing folder, not a folder, and none of INPUTS (the same file by name or by inode).
    Returns the format."""
    path = os.fspath(path)
    fmt = os.path.splitext(path)[1].lower().lstrip(".")
    for i in inputs:
        i = os.fspath(i)
        same = os.path.abspath(path) == os.path.abspath(i)
        if not same and os.path.exists(path) and os.path.exists(i):
            same = os.path.samefile(path, i)
        if same:
            raise PlotInputError("%s: is an input of this run; choose another output name" % path)
    if fmt not in FIGURE_FORMATS:
        raise PlotInputError("%s: the figure's name must end in .svg, .png or .pdf" % path)
    if os.path.isdir(path):
        raise PlotInputError("%s: is a folder" % path)
    folder = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(folder):
        raise PlotInputError("%s: no folder %s" % (path, folder))
    return fmt


def save(fig, path, inputs=(), dpi=None):
    """Writes FIG to PATH (format from the suffix: svg, png or pdf) through a temporary file in
    the same folder, renamed into place when complete; refuses a PATH that is one of INPUTS
    (check_output). DPI: the resolution of a PNG (default: the figure's, 100)."""
    path = os.fspath(path)
    fmt = check_output(path, inputs)
    folder = os.path.dirname(os.path.abspath(path))
    # Each drawn curve gets an id of its own in the SVG (ordex_curve_N), so that a reader of the
    # file can find the data lines among the grid and tick lines.
    k = 0
    for ax in fig.axes:
        for line in ax.get_lines():
            k += 1
            if line.get_gid() is None:
                line.set_gid("ordex_curve_%d" % k)
    fd, tmp = tempfile.mkstemp(prefix=".%s." % os.path.basename(path), suffix=".tmp", dir=folder)
    try:
        # SVG text stays text (searchable, editable), not glyph outlines.
        import matplotlib
        with os.fdopen(fd, "wb") as f, matplotlib.rc_context({"svg.fonttype": "none"}):
            fig.savefig(f, format=fmt, dpi=dpi or "figure")
        os.chmod(tmp, 0o666 & ~_umask())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


def _umask():
    mask = os.umask(0)
    os.umask(mask)
    return mask
