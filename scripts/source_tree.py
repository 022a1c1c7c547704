"""The C++ sources below a folder, in a fixed order: the one walk of the source tree that
scripts/check_layering.py and scripts/function_size.py share."""
import os

CPP_SUFFIXES = (".cc", ".h")


def cpp_files(folder):
    """Paths (joined to `folder`) of the .cc and .h files below `folder`, recursively: folders
    and files in name order, a folder's files before its sub-folders'."""
    for base, dirs, files in os.walk(folder):
        dirs.sort()
        for name in sorted(files):
            if name.endswith(CPP_SUFFIXES):
                yield os.path.join(base, name)
