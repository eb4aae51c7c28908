#!/usr/bin/env python3
"""Compare the diagnostics Neovim received from `foldcheck lsp` with `foldcheck check
--format json` on the same rig: the same rules and severities at the same 0-based
ranges.

`check` gives 1-based lines and 1-based columns counted in characters (docs/output.md);
Neovim's vim.diagnostic.get gives 0-based lines and 0-based byte columns, which it
worked out from the server's positions in the negotiated encoding (UTF-16 unless UTF-8
was negotiated). So each check column is turned into a byte column of the line here;
on a line with multibyte characters a server that counted in the wrong unit would land
elsewhere.

usage: compare.py NVIM_JSON CHECK_JSON RIG [--expect-multibyte]
"""
import json
import sys


def main():
    nvim_path, check_path, rig = sys.argv[1:4]
    expect_multibyte = "--expect-multibyte" in sys.argv[4:]
    nvim = json.load(open(nvim_path, encoding="utf-8"))
    check = json.load(open(check_path, encoding="utf-8"))
    lines = open(rig, encoding="utf-8").read().split("\n")

    enc = nvim["offset_encoding"]
    v = nvim["nvim"]
    print(f"  Neovim {v['major']}.{v['minor']}.{v['patch']}, position encoding {enc}")
    if enc not in ("utf-16", "utf-8"):
        sys.exit(f"unexpected position encoding {enc!r}")

    def byte_col(line, col):
        # 1-based character column -> 0-based byte column
        return len(lines[line - 1][: col - 1].encode("utf-8"))

    severity = {"error": 1, "warning": 2, "note": 3}
    want = sorted(
        (
            f["rule"],
            severity[f["severity"]],
            f["line"] - 1,
            byte_col(f["line"], f["column"]),
            f["end_line"] - 1,
            byte_col(f["end_line"], f["end_column"]),
        )
        for f in check["findings"]
        if "suppressed" not in f and f["file"] == rig
    )
    got = sorted(
        (d["rule"], d["severity"], d["lnum"], d["col"], d["end_lnum"], d["end_col"])
        for d in nvim["diagnostics"]
    )
    if got != want:
        print("  check --format json:")
        for w in want:
            print("   ", w)
        print("  Neovim:")
        for g in got:
            print("   ", g)
        sys.exit("the diagnostics differ")
    if not want:
        sys.exit("no findings to compare: the test rig must have some")
    multibyte = [
        w for w in want if len(lines[w[2]].encode("utf-8")) != len(lines[w[2]])
    ]
    if expect_multibyte and not multibyte:
        sys.exit("expected a finding on a line with multibyte characters")
    print(
        f"  {len(got)} diagnostics agree ({len(multibyte)} on lines with multibyte characters)"
    )


if __name__ == "__main__":
    main()
