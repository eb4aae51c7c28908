#!/usr/bin/env bash
# The editor server's analysis of an open 200-channel rig (target: under 20 ms on the
# development machine), side by side with check's own run on the same file and with the
# release server's save-to-diagnostics round trip. See benches/lsp_analysis.rs.
#
#   bench/lsp.sh            # the first 200-channel rig of the c1k campaign
#   REPEATS=100 bench/lsp.sh
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
root=$(dirname "$here")
cd "$root"
if [ ! -f "$here/out/c1k/rigs/r-00000.rig.yaml" ]; then
    python3 "$here/gen.py" --out "$here/out" --sizes 1k --single ''
fi
# One rig of the campaign and its catalog, under a foldcheck.toml (with no settings) that
# makes their folder the campaign root, as an editor's project would be.
camp=$here/out/lsp
rm -rf "$camp"
mkdir -p "$camp/rigs"
cp -r "$here/out/c1k/catalog" "$camp/"
cp "$here/out/c1k/rigs/r-00000.rig.yaml" "$camp/rigs/"
: > "$camp/foldcheck.toml"
cargo bench --quiet --bench lsp_analysis -- "$camp/rigs/r-00000.rig.yaml" "${REPEATS:-40}" \
    | tee "$here/out/lsp.md"
