#!/usr/bin/env python3
"""Function length check: every function body in the given C++ files or folders under a limit.

Usage: scripts/function_size.py [--max-lines N] [--top K] PATH...
  PATH: .cc/.h files or folders (searched recursively for *.cc and *.h).
  Prints the K longest functions (default 10; file:line of the opening brace), then every function longer than N lines
  (default 80, the limit DEVELOPERS.md sets: "every function under about 80 lines") and exits
  1 when there is one, 0 otherwise.

Length = the line number of the body's closing brace minus that of its opening brace, blank
and comment lines included: the count of clang-tidy's readability-function-size
LineThreshold ("N lines including whitespace and comments"; checked against clang-tidy 14 on
pipeline/report/plot/plot.cc and section_models.cc: 46, 54 and 55 lines, the same). A function is a brace block at
namespace scope or directly in a class/struct whose head (the text since the previous ';',
'{' or '}') holds a parameter list '(' and is not a class, struct, enum, union, namespace or an
initialiser ('= {'). Lambdas and blocks inside a function count towards that function.
Strings, character literals, raw strings and comments are skipped, so a '{' inside them
never counts.
"""
import argparse
import os
import re
import sys

sys.dont_write_bytecode = True  # no __pycache__ in the source tree
import source_tree  # noqa: E402 (scripts/source_tree.py, beside this script)

KEYWORDS_NOT_FUNCTION = re.compile(r"\b(class|struct|enum|union|namespace)\b")
CONTROL = re.compile(r"^\s*(if|for|while|switch|catch|do|else)\b")


def strip_code(text):
    """The text with comments and literals blanked out (newlines kept), so braces are code."""
    out = []
    i, n = 0, len(text)
    while i < n:
        c = text[i]
        if text.startswith("//", i):
            j = text.find("\n", i)
            j = n if j < 0 else j
            out.append(" " * (j - i))
            i = j
        elif text.startswith("/*", i):
            j = text.find("*/", i + 2)
            j = n if j < 0 else j + 2
            out.append(re.sub(r"[^\n]", " ", text[i:j]))
            i = j
        elif c == "R" and i + 1 < n and text[i + 1] == '"' and (
                i == 0 or not (text[i - 1].isalnum() or text[i - 1] == "_")):
            m = re.match(r'R"([^(\s]*)\(', text[i:])
            if not m:
                out.append(c)
                i += 1
                continue
            end = ")" + m.group(1) + '"'
            j = text.find(end, i + m.end())
            j = n if j < 0 else j + len(end)
            out.append(re.sub(r"[^\n]", " ", text[i:j]))
            i = j
        elif c in "\"'":
            if c == "'" and i > 0 and text[i - 1].isalnum():  # digit separator 1'000
                out.append(" ")
                i += 1
                continue
            j = i + 1
            while j < n and text[j] != c and text[j] != "\n":
                j += 2 if text[j] == "\\" else 1
            j = min(j + 1, n)
            out.append(re.sub(r"[^\n]", " ", text[i:j]))
            i = j
        else:
            out.append(c)
            i += 1
    return "".join(out)


def functions(path):
    """(name, first line, length in lines) of every function body in the file."""
    with open(path, encoding="utf-8") as f:
        code = strip_code(f.read())
    # Preprocessor lines are not code for this purpose.
    code = re.sub(r"(?m)^[ \t]*#.*$", lambda m: " " * len(m.group(0)), code)
    found = []
    # Stack of open braces: (kind, line, head); kind in {"scope", "function", "other"}.
    stack = []
    head_start = 0
    line = 1
    for i, c in enumerate(code):
        if c == "\n":
            line += 1
        elif c == "{":
            head = code[head_start:i]
            inside_function = any(kind == "function" for kind, _, _ in stack)
            if inside_function:
                kind = "other"
            elif KEYWORDS_NOT_FUNCTION.search(head) or re.search(r"=\s*$", head):
                kind = "scope"
            elif "(" in head and not CONTROL.match(head) and not head.strip().endswith(")=") :
                kind = "function"
            else:
                kind = "other" if stack and stack[-1][0] != "scope" else "scope"
            stack.append((kind, line, head))
            head_start = i + 1
        elif c == "}":
            if stack:
                kind, first, head = stack.pop()
                if kind == "function":
                    name = re.findall(r"([~\w:]+)\s*\(", head)
                    found.append((name[0] if name else "?", first, line - first))
            head_start = i + 1
        elif c == ";":
            head_start = i + 1
    return found


def sources(paths):
    """The files named and the C++ sources below the folders named."""
    for p in paths:
        if os.path.isdir(p):
            yield from source_tree.cpp_files(p)
        else:
            yield p


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--max-lines", type=int, default=80)
    parser.add_argument("--top", type=int, default=10)
    parser.add_argument("paths", nargs="+")
    args = parser.parse_args()
    rows = []
    for path in sources(args.paths):
        for name, first, length in functions(path):
            rows.append((length, f"{path}:{first}", name))
    rows.sort(key=lambda r: (-r[0], r[1]))
    print(f"== longest functions ({len(rows)} in all)")
    for length, where, name in rows[: args.top]:
        print(f"{length:5d}  {where}  {name}")
    over = [r for r in rows if r[0] > args.max_lines]
    if over:
        print(f"== {len(over)} function(s) longer than {args.max_lines} lines")
        for length, where, name in over:
            print(f"{length:5d}  {where}  {name}")
        return 1
    print(f"== every function at most {args.max_lines} lines")
    return 0


if __name__ == "__main__":
    sys.exit(main())
