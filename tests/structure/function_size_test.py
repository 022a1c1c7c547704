#!/usr/bin/env python3
"""scripts/function_size.py on invented sources: lengths counted as documented (closing brace
line minus opening brace line, clang-tidy's count), braces in strings, raw strings and comments ignored, classes
and namespaces not counted as functions, the limit reported with exit code 1."""
import os
import subprocess
import sys
import tempfile
import unittest

SCRIPT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "scripts",
                      "function_size.py")

SOURCE = '''#include "a.h"

#include <b>
namespace a::b {
namespace {
struct Point {
  double x = 0.0;
  double Norm() const {
    return x;
  }
};
}  // namespace

int Short(int v) {
  const char* text = "{{ not a brace";  // } nor this
  /* { */
  return v;
}

std::string Raw() {
  return R"({
{)";
}

void Long(int n,
          int m) {
%s}

}  // namespace a::b
'''


def run(body_lines, limit):
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "sample.cc")
        with open(path, "w", encoding="utf-8") as f:
            f.write(SOURCE % ("  n += m;\n" * body_lines))
        out = subprocess.run([sys.executable, SCRIPT, "--max-lines", str(limit), "--top", "10",
                              path], capture_output=True, text=True, check=False)
        return out.returncode, out.stdout


class FunctionSizeTest(unittest.TestCase):
    def test_lengths_as_documented(self):
        code, out = run(body_lines=5, limit=80)
        self.assertEqual(code, 0, out)
        # Long: opening brace on line 26 (the location printed; the blank line between the
        # includes counts), 5 statements, closing brace on line 32: 6.
        self.assertRegex(out, r"\n\s+6  \S+sample.cc:26  Long\n")
        self.assertRegex(out, r"\n\s+4  \S+sample.cc:14  Short\n")
        self.assertRegex(out, r"\n\s+3  \S+sample.cc:20  Raw\n")
        self.assertRegex(out, r"\n\s+2  \S+sample.cc:8  Norm\n")
        self.assertIn("(4 in all)", out)  # neither the struct nor the namespaces

    def test_limit_is_reported(self):
        code, out = run(body_lines=80, limit=80)  # 81 lines: one over
        self.assertEqual(code, 1, out)
        self.assertIn("1 function(s) longer than 80 lines", out)
        self.assertRegex(out, r"\n\s+81  \S+sample.cc:26  Long")


if __name__ == "__main__":
    unittest.main()
