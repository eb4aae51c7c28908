#!/usr/bin/env python3
"""Load every *.yaml / *.yml file under the given paths with PyYAML's C loader and do
nothing else: what a user would script instead of foldcheck (the benchmark's reference).

    python3 bench/pyyaml_load.py PATH...

Prints `pyyaml files bytes 0 seconds` (the documents are loaded and dropped, not
walked).
"""

import os
import sys
import time

import yaml


def files(paths):
    for p in paths:
        if os.path.isfile(p):
            yield p
            continue
        for dirpath, dirnames, filenames in os.walk(p):
            dirnames.sort()
            for name in sorted(filenames):
                if name.endswith((".yaml", ".yml")):
                    yield os.path.join(dirpath, name)


def main():
    start = time.perf_counter()
    n_files = n_bytes = 0
    for path in files(sys.argv[1:]):
        with open(path, "rb") as f:
            data = f.read()
        yaml.load(data, Loader=yaml.CSafeLoader)
        n_files += 1
        n_bytes += len(data)
    print(f"pyyaml {n_files} {n_bytes} 0 {time.perf_counter() - start:.6f}")


if __name__ == "__main__":
    main()
