#!/usr/bin/env python3
"""Layering check: every project #include of the libraries follows DEVELOPERS.md "Architecture".

Usage: scripts/check_layering.py --source ROOT --public-headers BUILD/include
  ROOT: the repository; BUILD/include: the public header tree the build makes
  (cmake/Sorbtrace.cmake, sorbtrace_library PUBLIC_HEADERS): BUILD/include/<library>/<path>.
  Exit 0 when every include is allowed, 1 with one line per violation
  ("file:line: ..."), 2 on a usage error.

Rules (a "library" is a folder below; its public headers are those the build exports, so the
list lives in one place, the CMakeLists.txt of each library):
  - Stages in order: ingest < equilibrate < reduce < fit < pores < report < run. A stage
    includes from another stage only that stage's public header(s), and only from an earlier
    stage (no upward imports).
  - Foundations: common < physics < conform < fitters (in that order of what each may use;
    conform and physics use at most common; fitters uses common and physics). A foundation
    never includes a stage. Every stage may include the public headers of every foundation.
  - A library includes its own headers freely.
The build fails on most violations already (a stage sees only the public headers of the
libraries it links); this check also catches an upward import that a new link would allow.
"""
import argparse
import os
import re
import sys

sys.dont_write_bytecode = True  # no __pycache__ in the source tree
import source_tree  # noqa: E402 (scripts/source_tree.py, beside this script)

STAGES = ["ingest", "equilibrate", "reduce", "fit", "pores", "report", "run"]
# Library folder -> name of its library in the build (sorbtrace_<name>).
FOLDERS = {f"pipeline/{s}": s for s in STAGES}
FOLDERS.update({"pipeline/common": "common", "pipeline/physics": "physics",
                "pipeline/conform": "conform", "fitters": "fitters"})
# What each foundation may include besides itself.
FOUNDATION_USES = {
    "common": set(),
    "physics": {"common"},
    "conform": {"common"},
    "fitters": {"common", "physics"},
}
INCLUDE = re.compile(r'^\s*#\s*include\s*"([^"]+)"')


def library_of(path):
    """The library folder a repository path belongs to, or None (tests, bench, third party)."""
    for folder in sorted(FOLDERS, key=len, reverse=True):
        if path == folder or path.startswith(folder + "/"):
            return folder
    return None


def public_headers(include_root):
    """Repository paths of the headers the build exports, e.g. 'pipeline/fit/fit_stage.h'."""
    found = set()
    for library in sorted(os.listdir(include_root)):
        top = os.path.join(include_root, library)
        for root, dirs, files in os.walk(top, followlinks=True):
            dirs.sort()
            for name in files:
                found.add(os.path.relpath(os.path.join(root, name), top).replace(os.sep, "/"))
    return found


def allowed(from_folder, to_folder, header, public):
    """'' when `from_folder` may include `header` of `to_folder`, else the reason it may not."""
    if from_folder == to_folder:
        return ""
    source, target = FOLDERS[from_folder], FOLDERS[to_folder]
    if header not in public:
        return f"{header} is internal to {to_folder} (not among its public headers)"
    if source in FOUNDATION_USES:
        if target in FOUNDATION_USES[source]:
            return ""
        return f"{from_folder} may use only {sorted(FOUNDATION_USES[source]) or 'nothing'}"
    if target in FOUNDATION_USES:
        return ""
    if STAGES.index(target) >= STAGES.index(source):
        return f"upward import: stage {source} comes before {target} (stage order {' < '.join(STAGES)})"
    return ""


def project_files(root):
    """Repository paths of the C++ sources of every library folder, in a fixed order."""
    for folder in sorted(FOLDERS):
        for path in source_tree.cpp_files(os.path.join(root, folder)):
            yield os.path.relpath(path, root).replace(os.sep, "/")


def violations(root, public):
    for path in project_files(root):
        from_folder = library_of(path)
        with open(os.path.join(root, path), encoding="utf-8") as f:
            for number, line in enumerate(f, start=1):
                m = INCLUDE.match(line)
                if not m:
                    continue
                to_folder = library_of(m.group(1))
                if to_folder is None:
                    continue  # generated (pipeline/run/version.h is the run stage's) or external
                reason = allowed(from_folder, to_folder, m.group(1), public)
                if reason:
                    yield f"{path}:{number}: #include \"{m.group(1)}\": {reason}"


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--source", required=True)
    parser.add_argument("--public-headers", required=True)
    args = parser.parse_args()
    if not os.path.isdir(args.public_headers):
        print(f"{args.public_headers}: no public header tree (configure the build first)")
        return 2
    public = public_headers(args.public_headers)
    problems = list(violations(args.source, public))
    for p in problems:
        print(p)
    if problems:
        print(f"== {len(problems)} include(s) against the layering (DEVELOPERS.md, Architecture)")
        return 1
    print(f"== layering: every include allowed ({len(public)} public headers)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
