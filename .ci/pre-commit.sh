#!/usr/bin/env bash
# The real pre-commit framework on a throwaway repository laid out the usual way:
# sibling `rigs/` and `catalog/`, no foldcheck.toml.
#
#   .ci/pre-commit.sh FOLDCHECK_BINARY PRE_COMMIT_EXECUTABLE
#
# A local hook (`language: system`) runs the built binary with this repository's
# `files` pattern. Committing a good rig passes; a bad rig fails with the finding in the
# output; a catalog change that breaks a rig including it fails and names that rig.
#
# With FOLDCHECK_PRECOMMIT_RUST=1 it also runs this repository's `.pre-commit-hooks.yaml`
# from a local clone, so pre-commit builds the crate with cargo (`language: rust`) the
# way users get it. That is a full release build of the crate and its dependencies
# (several minutes on a small CI machine), so it is off by default.
set -euo pipefail

bin=$(realpath "$1")
pre_commit=$(realpath "$2")
src=$(realpath "$(dirname "$0")/..")
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
export PRE_COMMIT_HOME="$work/pre-commit-home"   # nothing under ~/.cache
export GIT_CONFIG_NOSYSTEM=1
export HOME="$work/home"                        # no user git configuration
mkdir -p "$HOME"

repo="$work/lab-repo"
mkdir -p "$repo/rigs" "$repo/catalog"
cd "$repo"
git init --quiet
git config user.name "CI"
git config user.email "ci@example.invalid"
git config commit.gpgsign false

# The hook's file pattern, exactly as this repository ships it.
files=$(sed -n "s/^  files: '\(.*\)'$/\1/p" "$src/.pre-commit-hooks.yaml")
[ -n "$files" ] || { echo "no files pattern in .pre-commit-hooks.yaml"; exit 1; }

cat > .pre-commit-config.yaml <<EOF
repos:
  - repo: local
    hooks:
      - id: foldcheck
        name: foldcheck
        entry: $bin check --color never
        language: system
        files: '$files'
        pass_filenames: true
        require_serial: true
EOF

# A made-up lab's shared equipment: 24.576 MHz / 512 = 48 kHz exactly.
cat > catalog/hall.yaml <<'EOF'
format: 1
catalog: hall
clocks:
  - { name: hall-osc, frequency: 24.576 MHz }
  - { name: f48k, source: hall-osc, divide: 512 }
sensors:
  - { name: mic, bandwidth: 20 kHz }
EOF

# 48 kHz for a 10 kHz band: ratio 4.8; the digital filter gives 100 dB from
# 0.55 × 48 kHz = 26.4 kHz, below the first fold at 48 − 10 = 38 kHz.
rig() {
  cat <<EOF
format: 1
rig: $1
include: [../catalog/hall.yaml]
channels:
  - name: $1-mic
    clock: f48k
    sensor: mic
    band: $2
    filters: [{ response: digital, passband-edge: 0.45, stopband-edge: 0.55, attenuation: 100 dB }]
EOF
}

"$pre_commit" install >/dev/null
log="$work/commit.log"

commit() {  # commit MESSAGE: run the hook through git commit; stdout+stderr in $log
  git commit --quiet -m "$1" >"$log" 2>&1
}

fail() { echo "pre-commit check failed: $*"; echo "--- output:"; cat "$log"; exit 1; }

git add .pre-commit-config.yaml catalog/hall.yaml
commit "shared catalog" || fail "the catalog alone should pass"

rig bay-1 "10 kHz" > rigs/bay-1.rig.yaml
git add rigs/bay-1.rig.yaml
commit "good rig" || fail "a good rig should pass"
grep -q "foldcheck.*Passed" "$log" || fail "the hook did not run on the good rig"
echo "good rig: passed"

# A 30 kHz band at 48 kHz: 48 ≤ 2 × 30, a nyquist error.
rig bay-2 "30 kHz" > rigs/bay-2.rig.yaml
git add rigs/bay-2.rig.yaml
if commit "bad rig"; then fail "a bad rig should fail"; fi
grep -q "nyquist" "$log" || fail "the finding is not in the output"
grep -q "rigs/bay-2.rig.yaml" "$log" || fail "the bad rig is not named"
echo "bad rig: failed with the finding"
git rm --quiet --cached rigs/bay-2.rig.yaml
rm rigs/bay-2.rig.yaml

# Divide by 2048 instead: 12 kHz, not above twice bay-1's 10 kHz band. Only the catalog
# is committed; the hook must lint the rig that includes it.
sed -i 's/divide: 512/divide: 2048/' catalog/hall.yaml
git add catalog/hall.yaml
if commit "slower hall clock"; then fail "a catalog change breaking a rig should fail"; fi
grep -q "rigs/bay-1.rig.yaml" "$log" || fail "the broken rig is not named"
grep -q "nyquist" "$log" || fail "the rig's finding is not in the output"
echo "catalog change: failed, naming rigs/bay-1.rig.yaml"
git checkout --quiet -- catalog/hall.yaml 2>/dev/null || git reset --quiet --hard

if [ "${FOLDCHECK_PRECOMMIT_RUST:-0}" = "1" ]; then
  clone="$work/foldcheck-clone"
  git clone --quiet "$src" "$clone"
  rev=$(git -C "$clone" rev-parse HEAD)
  cat > .pre-commit-config.yaml <<EOF
repos:
  - repo: $clone
    rev: $rev
    hooks:
      - id: foldcheck
EOF
  start=$(date +%s)
  "$pre_commit" run --all-files >"$log" 2>&1 || fail "the rust hook should pass on the good rig"
  echo "language: rust hook from a local clone: built and passed in $(( $(date +%s) - start )) s"
fi
echo "pre-commit: all checks passed"
