#!/usr/bin/python3
# ordex-plot: the natural figure of an ordex result (any app's JSON summary or CSV), drawn by
# python/ordex/plot.py with matplotlib. CMake configures this file into bin/ordex-plot; the
# figure module is looked up next to the installed script first, then in the source tree.
import argparse
import importlib.util
import os
import sys

APP = "ordex-plot"
EXIT_INPUT = 2
SOURCE_PYTHON_DIR = "@ORDEX_PLOT_SOURCE_PYTHON_DIR@"

ABOUT = """Draws the natural figure of an ordex result and writes it as SVG, PNG or PDF (by the
suffix of -o). The kind of result is recognised from the JSON keys or the CSV header:
  ordex-propagate --csv        singular values of Phi(t, t0) over time (--entries: chosen entries)
  ordex-propagate --floquet    Floquet multipliers and the unit circle (JSON)
  ordex-gramian --window-length --csv  smallest and largest eigenvalue of each window
  ordex-gramian (JSON)         the Gramian's eigenvalues and the rank threshold
  ordex-regulate --csv/--json  the gain schedule K(t) (--entries: chosen entries)
  ordex-regulate --p-csv       entries of P(t); ordex-gramian --csv: of W(t0, t)
  ordex-discretize             step growth: |Phi_k| and |Phi(t_k, t_0)| over the grid
  ordex-respond --csv          states and outputs over time, one panel each; several RESULT
                               files (or a folder of CSVs) are overlaid (--columns: chosen ones)
  ordex-respond --json         the final state of each run
Exit status: 0 done, 2 bad usage or a result that cannot be read or recognised."""


def find_plot_module():
    here = os.path.dirname(os.path.realpath(__file__))
    candidates = [os.path.join(here, os.pardir, "share", "ordex", "python", "ordex", "plot.py"),
                  os.path.join(SOURCE_PYTHON_DIR, "ordex", "plot.py")]
    for path in candidates:
        if os.path.isfile(path):
            # Loaded by file, not as ordex.plot: the figures need no compiled extension, and an
            # installed `ordex` package elsewhere on sys.path must not shadow this copy.
            spec = importlib.util.spec_from_file_location("ordex_plot", path)
            module = importlib.util.module_from_spec(spec)
            spec.loader.exec_module(module)
            return module
    raise RuntimeError("the figure module plot.py is not installed beside %s (looked in %s)" % (APP, ", ".join(candidates)))


class Parser(argparse.ArgumentParser):
    def error(self, message):
        print("%s: error: %s (see --help)" % (APP, message), file=sys.stderr)
        sys.exit(EXIT_INPUT)


def split_list(text):
    return [x for x in (s.strip() for s in text.split(",")) if x] if text else None


def expand(results):
    """RESULT arguments, a folder standing for its *.csv files in name order."""
    files = []
    for r in results:
        if os.path.isdir(r):
            inside = sorted(os.path.join(r, f) for f in os.listdir(r) if f.endswith(".csv"))
            if not inside:
                raise ValueError("%s: a folder without CSV files" % r)
            files.extend(inside)
        else:
            files.append(r)
    return files


def main(argv):
    p = Parser(prog=APP, description=ABOUT, formatter_class=argparse.RawDescriptionHelpFormatter,
               usage="%(prog)s RESULT [RESULT ...] -o FIGURE.svg|png|pdf [options]")
    p.add_argument("results", metavar="RESULT", nargs="+",
                   help="an app's JSON summary or CSV; several response CSVs (or a folder of them) are overlaid")
    p.add_argument("-o", "--output", metavar="FIGURE", required=True,
                   help="the figure to write: .svg, .png or .pdf (written whole or not at all; never an input)")
    p.add_argument("--entries", metavar="I_J,...",
                   help="matrix entries to draw instead of the default (e.g. 1_1,2_1 or phi_1_2): for a transition "
                        "matrix (default: its singular values), a gain schedule or a matrix series (default: all)")
    p.add_argument("--columns", metavar="NAMES",
                   help="columns of a response to draw, comma-separated names from its header (default: all); "
                        "for an ordex-sweep table, the key figure to chart (default: max_abs_multiplier, "
                        "else the first)")
    p.add_argument("--dpi", metavar="N", type=int, default=150, help="resolution of a PNG (default 150)")
    p.add_argument("--version", action="version", version="%s (ordex) @PROJECT_VERSION@" % APP)
    args = p.parse_args(argv)
    if not 10 <= args.dpi <= 1200:
        p.error("--dpi: %d is outside [10, 1200]" % args.dpi)
    plot = find_plot_module()
    try:
        results = expand(args.results)
        plot.check_output(args.output, results)  # before any drawing
        plot.save(plot.plot(results, entries=split_list(args.entries), columns=split_list(args.columns)),
                  args.output, inputs=results, dpi=args.dpi)
    except (ValueError, OSError) as e:  # PlotInputError is a ValueError
        message = " ".join(str(e).split())  # one line
        print("%s: error: %s" % (APP, message), file=sys.stderr)
        return EXIT_INPUT
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
