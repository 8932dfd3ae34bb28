#!/usr/bin/env bash
# Compare the command's outputs at two revisions byte for byte.
#
#   bash scripts/same-bytes.sh [BASE_REV] [-quick]
#
# Builds deltaprobe at BASE_REV (default: HEAD~1) and from the work tree,
# runs both on every study in studies/ (run, predict, and plan where the
# study has a [plan] table), on `families`, and on the study of the
# command's golden tests, and compares stdout, summary.csv, verdicts.csv
# and plan.csv with cmp (figures are compared and only noted). -quick caps replicates at 2000 per n (the numbers
# still cover every code path; a full comparison takes several minutes on
# two cores). Exit status 0 when every file matches.
set -euo pipefail
cd "$(dirname "$0")/.."
base=${1:-HEAD~1}
quick=""
[ "${2:-}" = "-quick" ] && quick="-replicates 2000"

repo=$(pwd)
work=$(mktemp -d)
trap 'git -C "$repo" worktree remove --force "$work/base-src" >/dev/null 2>&1 || true; rm -rf "$work"' EXIT
git worktree add --detach "$work/base-src" "$base" >/dev/null 2>&1
(cd "$work/base-src" && go build -o "$work/old.bin" ./cmd/deltaprobe)
go build -o "$work/new.bin" ./cmd/deltaprobe

studies=(studies/*.toml)
status=0
for bin in old new; do
	mkdir -p "$work/$bin"
	for s in "${studies[@]}"; do
		name=$(basename "$s" .toml)
		"$work/$bin.bin" run "$s" -o "$work/$bin/run-$name" -quiet -workers 2 $quick >"$work/$bin/run-$name.stdout" 2>/dev/null || true
		"$work/$bin.bin" predict "$s" >"$work/$bin/predict-$name.stdout" 2>&1 || true
		if grep -q '^\[plan\]' "$s"; then
			"$work/$bin.bin" plan "$s" -o "$work/$bin/plan-$name" -quiet -workers 2 >"$work/$bin/plan-$name.stdout" 2>/dev/null || true
		fi
	done
	"$work/$bin.bin" families >"$work/$bin/families.stdout" 2>&1 || true
	for bad in testdata/bad/*.toml; do
		"$work/$bin.bin" run "$bad" -o "$work/$bin/bad" >/dev/null 2>>"$work/$bin/bad.stderr" || true
	done
done
cd "$work/old"
while IFS= read -r f; do
	if ! cmp -s "$work/old/$f" "$work/new/$f"; then
		echo "DIFFERS: $f"; status=1
	fi
done < <(find . -type f \( -name '*.csv' -o -name '*.stdout' -o -name '*.stderr' \) | sort)
# Figures are compared too, but only noted: a deliberate change of a
# figure is not a change of the numbers.
while IFS= read -r f; do
	cmp -s "$work/old/$f" "$work/new/$f" || echo "note: figure differs: $f"
done < <(find . -type f -name '*.png' | sort)
n=$(find . -type f \( -name '*.csv' -o -name '*.stdout' -o -name '*.stderr' \) | wc -l)
[ $status -eq 0 ] && echo "same bytes: $n files compared against $base"
exit $status
