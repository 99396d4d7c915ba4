"""The worked example of docs/python.md runs as written (its own asserts check it against
ordex's other routes), and help() has something to say about every public name."""
import contextlib
import io
import os
import re
import unittest

import ordex

ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))


class DocsExample(unittest.TestCase):
    def test_python_blocks_run(self):
        with open(os.path.join(ROOT, "docs", "python.md")) as f:
            blocks = re.findall(r"```python\n(.*?)```", f.read(), re.S)
        self.assertGreaterEqual(len(blocks), 1)
        here = os.getcwd()
        os.chdir(ROOT)  # the example names models/ relative to the source tree
        try:
            out = io.StringIO()
            with contextlib.redirect_stdout(out):
                for block in blocks:
                    exec(compile(block, "docs/python.md", "exec"), {})
        finally:
            os.chdir(here)
        self.assertIn("cost_predicted", out.getvalue())

    def test_help_texts(self):
        for name in ("transition", "floquet", "gramian", "regulate", "respond", "discretize",
                     "load_model"):
            text = getattr(ordex, name).__doc__
            self.assertIn("(", text, name)
            self.assertGreater(len(text), 200, name)


if __name__ == "__main__":
    unittest.main()
