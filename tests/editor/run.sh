#!/usr/bin/env bash
# A real editor against `foldcheck lsp`: Neovim (headless, its built-in LSP client,
# started by lsp_diagnostics.lua) opens each rig below, and the diagnostics it receives
# must be the findings of `foldcheck check --format json` on the same file: same rules,
# severities and 0-based ranges. Needs `nvim` (Debian: apt-get install -y neovim) and
# python3; .ci/run installs Neovim. Usage: tests/editor/run.sh [FOLDCHECK_BINARY]
set -euo pipefail
cd "$(dirname "$0")/../.."
bin=$(realpath "${1:-target/debug/foldcheck}")
if ! command -v nvim >/dev/null 2>&1; then
  echo "tests/editor/run.sh: nvim not found (install it: apt-get install -y neovim)" >&2
  exit 1
fi
nvim --version | head -n 1
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
status=0
for rig in examples/blade-fatigue.rig.yaml examples/gearbox-nvh.rig.yaml \
           examples/pitch-bearing.rig.yaml tests/editor/listening-room.rig.yaml; do
  abs=$(realpath "$rig")
  echo "== $rig"
  FOLDCHECK_BIN="$bin" FOLDCHECK_RIG="$abs" FOLDCHECK_OUT="$work/nvim.json" \
    timeout 120 nvim --headless --clean -u NONE -i NONE -n \
    -c "luafile tests/editor/lsp_diagnostics.lua" </dev/null
  "$bin" check --format json --color never "$abs" > "$work/check.json" || true
  extra=()
  if [ "$rig" = tests/editor/listening-room.rig.yaml ]; then extra=(--expect-multibyte); fi
  python3 tests/editor/compare.py "$work/nvim.json" "$work/check.json" "$abs" "${extra[@]}" || status=1
  rm -f "$work/nvim.json"
done
exit $status
