#!/usr/bin/env python3
"""scripts/check_layering.py on small invented trees: each rule of DEVELOPERS.md "Architecture"
it enforces is broken once and must be reported; a tree that keeps the rules passes."""
import os
import subprocess
import sys
import tempfile
import unittest

SCRIPT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "scripts",
                      "check_layering.py")
# The public headers of the invented tree, as the build would export them.
PUBLIC = ["common/pipeline/common/diagnostics.h", "physics/pipeline/physics/physics.h",
          "fitters/fitters/model.h", "ingest/pipeline/ingest/ingest.h",
          "reduce/pipeline/reduce/reduce.h", "fit/pipeline/fit/fit_stage.h"]


def write(root, path, text=""):
    full = os.path.join(root, path)
    os.makedirs(os.path.dirname(full), exist_ok=True)
    with open(full, "w", encoding="utf-8") as f:
        f.write(text)


def check(sources):
    """(exit code, output) of the check on a tree holding `sources` {path: text}."""
    with tempfile.TemporaryDirectory() as tmp:
        source, include = os.path.join(tmp, "src"), os.path.join(tmp, "build", "include")
        for header in PUBLIC:
            write(include, header)
        for path, text in sources.items():
            write(source, path, text)
        run = subprocess.run([sys.executable, SCRIPT, "--source", source, "--public-headers",
                              include], capture_output=True, text=True, check=False)
        return run.returncode, run.stdout


class CheckLayeringTest(unittest.TestCase):
    def test_allowed_includes_pass(self):
        code, out = check({
            "pipeline/fit/fit_stage.cc": '#include "pipeline/fit/grouping.h"\n'
                                         '#include "pipeline/reduce/reduce.h"\n'
                                         '#include "fitters/model.h"\n'
                                         '#include "pipeline/common/diagnostics.h"\n',
            "fitters/fitter.cc": '#include "pipeline/physics/physics.h"\n',
        })
        self.assertEqual(code, 0, out)

    def test_internal_header_of_another_stage_is_reported(self):
        code, out = check({"pipeline/pores/pores.cc": '\n#include "pipeline/fit/grouping.h"\n'})
        self.assertEqual(code, 1)
        self.assertIn("pipeline/pores/pores.cc:2:", out)
        self.assertIn("internal to pipeline/fit", out)

    def test_upward_import_is_reported(self):
        code, out = check({"pipeline/ingest/ingest.cc": '#include "pipeline/fit/fit_stage.h"\n'})
        self.assertEqual(code, 1)
        self.assertIn("upward import: stage ingest comes before fit", out)

    def test_foundation_including_a_stage_is_reported(self):
        code, out = check({"fitters/registry.cc": '#include "pipeline/ingest/ingest.h"\n'})
        self.assertEqual(code, 1)
        self.assertIn("fitters/registry.cc:1:", out)

    def test_foundation_order_is_enforced(self):
        code, out = check({"pipeline/physics/water.cc": '#include "fitters/model.h"\n'})
        self.assertEqual(code, 1)
        self.assertIn("pipeline/physics may use only ['common']", out)


if __name__ == "__main__":
    unittest.main()
