"""bin/ordex-plot on real app output: a figure file of each format with the right signature and
the model's names as axis labels, overlaid runs, and every bad input answered with exit 2 and
one line naming the file, leaving no partial figure and never overwriting an input.
Run by ctest as plot_app."""
import os
import subprocess
import tempfile
import unittest
import xml.etree.ElementTree as ET

import numpy as np

from plot_support import BIN_DIR, DATA, MODELS, run, write_input

PLOT = os.path.join(BIN_DIR, "ordex-plot")


def ordex_plot(*args):
    return subprocess.run([PLOT] + [str(a) for a in args], capture_output=True, text=True, timeout=120)


def svg_texts(path):
    root = ET.parse(path).getroot()
    return [("".join(e.itertext())).strip() for e in root.iter() if e.tag.endswith("text")]


def svg_line_count(path):
    """Curves drawn: ordex.plot.save gives each data line the SVG id ordex_curve_N."""
    root = ET.parse(path).getroot()
    return sum(1 for g in root.iter() if g.get("id", "").startswith("ordex_curve_"))


class PlotApp(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.TemporaryDirectory()
        d = cls.dir = cls.tmp.name
        run(["ordex-propagate", "--model", os.path.join(MODELS, "mathieu.toml"), "--csv", f"{d}/phi.csv",
             "--samples", 21])
        t = np.linspace(0, 5, 51)
        write_input(f"{d}/a.csv", t, [np.ones_like(t), np.zeros_like(t)], ["t", "u1", "u2"])
        write_input(f"{d}/b.csv", t, [np.sin(t), np.zeros_like(t)], ["t", "u1", "u2"])
        write_input(f"{d}/c.csv", t, [np.cos(t), np.ones_like(t)], ["t", "u1", "u2"])
        os.mkdir(f"{d}/runs")
        run(["ordex-respond", "--model", os.path.join(DATA, "response_pumped.toml"), "--input", f"{d}/a.csv",
             "--input", f"{d}/b.csv", "--input", f"{d}/c.csv", "--csv", f"{d}/runs"])

    @classmethod
    def tearDownClass(cls):
        cls.tmp.cleanup()

    def path(self, name):
        return os.path.join(self.dir, name)

    def test_formats(self):
        signatures = {"png": b"\x89PNG\r\n\x1a\n", "pdf": b"%PDF-"}
        for fmt in ("svg", "png", "pdf"):
            out = self.path("phi." + fmt)
            p = ordex_plot(self.path("phi.csv"), "-o", out)
            self.assertEqual(p.returncode, 0, p.stderr)
            self.assertEqual(p.stderr, "")
            with open(out, "rb") as f:
                data = f.read()
            if fmt == "svg":
                self.assertIn("singular values of Phi(t, t0)", svg_texts(out))
                self.assertEqual(svg_line_count(out), 2)  # two singular values of a 2 x 2 Phi
            else:
                self.assertTrue(data.startswith(signatures[fmt]), fmt)

    def test_runs_overlaid_from_a_folder(self):
        out = self.path("runs.svg")
        p = ordex_plot(self.path("runs"), "-o", out)
        self.assertEqual(p.returncode, 0, p.stderr)
        texts = svg_texts(out)
        for name in ("x1", "x2", "y"):  # the model's state and output names label the panels
            self.assertIn(name, texts)
        self.assertEqual(svg_line_count(out), 9)  # 3 panels x 3 runs
        self.assertIn("responses: 3 runs", texts)
        p = ordex_plot(self.path("runs/a.csv"), "--columns", "y", "-o", self.path("y.svg"))
        self.assertEqual(p.returncode, 0, p.stderr)
        self.assertEqual(svg_line_count(self.path("y.svg")), 1)

    def assert_refused(self, args, *needles, output=None):
        output = output or self.path("refused.svg")
        p = ordex_plot(*args, "-o", output)
        self.assertEqual(p.returncode, 2, p.stderr)
        self.assertEqual(p.stdout, "")
        lines = p.stderr.splitlines()
        self.assertEqual(len(lines), 1, p.stderr)
        self.assertTrue(lines[0].startswith("ordex-plot: error: "), lines[0])
        for n in needles:
            self.assertIn(n, lines[0])
        if output != self.path("phi.csv"):
            self.assertFalse(os.path.exists(output))
        self.assertEqual([f for f in os.listdir(self.dir) if f.endswith(".tmp")], [])

    def test_bad_inputs(self):
        with open(self.path("unknown.csv"), "w") as f:
            f.write("alpha,beta\n1,2\n")
        self.assert_refused([self.path("unknown.csv")], "unknown.csv", "alpha,beta")
        with open(self.path("binary.dat"), "wb") as f:
            f.write(bytes(range(256)))
        self.assert_refused([self.path("binary.dat")], "binary.dat")
        self.assert_refused([self.path("missing.csv")], "missing.csv")
        self.assert_refused([self.path("phi.csv")], "figure.gif", output=self.path("figure.gif"))
        self.assert_refused([self.path("phi.csv"), "--bogus"], "--bogus")
        # The input itself as the output: refused, and the input is intact.
        with open(self.path("phi.csv"), "rb") as f:
            before = f.read()
        self.assert_refused([self.path("phi.csv")], "input", output=self.path("phi.csv"))
        with open(self.path("phi.csv"), "rb") as f:
            self.assertEqual(f.read(), before)

    def test_help_and_usage(self):
        p = ordex_plot("--help")
        self.assertEqual(p.returncode, 0)
        for option in ("--output", "--entries", "--columns", "--dpi"):
            self.assertIn(option, p.stdout)
        p = ordex_plot()
        self.assertEqual(p.returncode, 2)
        self.assertEqual(len(p.stderr.splitlines()), 1, p.stderr)


if __name__ == "__main__":
    unittest.main()
