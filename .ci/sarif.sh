#!/usr/bin/env bash
# Validate foldcheck's SARIF with the SARIF multitool's `validate` (the validator the
# SARIF authors publish; npm package @microsoft/sarif-multitool, a self-contained Linux
# binary), pinned. Fails on any error or warning it reports; notes are listed only.
# Policy: .ci/sarif-validate.xml turns SARIF2005 (informationUri) off (README).
# Usage: .ci/sarif.sh path/to/foldcheck
set -euo pipefail
cd "$(dirname "$0")/.."
bin=$(realpath "$1")
version=5.7.0
prefix=.ci/node
tool=$prefix/node_modules/@microsoft/sarif-multitool-linux/Sarif.Multitool
if [ ! -x "$tool" ] || ! "$tool" --version 2>/dev/null | grep -q "^SARIF Multitool $version"; then
  npm install --silent --no-audit --no-fund --prefix "$prefix" "@microsoft/sarif-multitool@$version"
  chmod u+x "$tool"
fi
policy=$(realpath .ci/sarif-validate.xml)

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
# Hostile and odd inputs in a throwaway git work tree: a space in directory and file
# names, a backslash and a `#` in a file name, a catalog on its own, a file that does not
# parse, one that lies outside the work tree.
mkdir -p "$work/repo/.git" "$work/repo/my rigs" "$work/repo/catalog" "$work/outside"
cp examples/catalog/*.yaml "$work/repo/catalog/"
cp examples/blade-fatigue.rig.yaml "$work/repo/my rigs/blade fatigue.rig.yaml"
sed -i 's#catalog/#../catalog/#' "$work/repo/my rigs/blade fatigue.rig.yaml"
cp examples/pitch-bearing.rig.yaml "$work/repo/odd\\name#1.rig.yaml"
printf 'rig: [unclosed\n  channels: {\n' > "$work/repo/my rigs/broken.rig.yaml"
cp examples/gearbox-nvh.rig.yaml "$work/outside/gearbox.rig.yaml"

declare -a cases=(
  "examples|$PWD|examples/"
  "space|$work/repo/my rigs|."
  "catalog|$work/repo|catalog/"
  "backslash|$work/repo|odd\\name#1.rig.yaml"
  "outside|$work/repo|../outside/gearbox.rig.yaml"
)
failed=0
for c in "${cases[@]}"; do
  IFS='|' read -r name dir arg <<<"$c"
  log="$work/$name.sarif"
  status=0
  (cd "$dir" && "$bin" check --format sarif "$arg") > "$log" || status=$?
  if [ "$status" -gt 1 ]; then
    echo "SARIF ($name): foldcheck exited with $status"; failed=1; continue
  fi
  out="$work/$name.validation.sarif"
  status=0
  "$tool" validate --level Error Warning Note -c "$policy" -o "$out" "$log" \
    > "$work/$name.txt" 2>&1 || status=$?
  # The one warning expected: the policy itself disables SARIF2005 (WRN999).
  bad=$(grep -E ': (error|warning) ' "$work/$name.txt" \
    | grep -v "WRN999.RuleExplicitlyDisabled : Rule 'SARIF2005'" || true)
  notes=$(grep -oE ': note [A-Z0-9]+' "$work/$name.txt" | sort | uniq -c | tr -s ' \n' ' ' || true)
  if [ "$status" -ne 0 ] || [ -n "$bad" ] || ! grep -q "Analysis completed successfully" "$work/$name.txt"; then
    echo "SARIF ($name): the validator reports (exit status $status):"
    if [ -n "$bad" ]; then echo "$bad"; else tail -n 20 "$work/$name.txt"; fi
    failed=1
  else
    echo "SARIF ($name): no errors or warnings; notes:$notes"
  fi
done
exit "$failed"
