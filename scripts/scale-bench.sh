#!/usr/bin/env bash
# Peak memory, time and result.json size of `run`, `run -resume`, `merge`
# and `report` at 10^4, 10^6 and 10^8 replicates per n (make bench calls
# it; REPS overrides the list). Each line: what ran, replicates per n, peak
# resident memory (MiB, from /usr/bin/time), wall seconds, and the size of
# the result.json it wrote. It also checks that the resumed run and the
# merged shards give the uninterrupted run's summary.csv byte for byte.
#
# usage: scripts/scale-bench.sh [DELTAPROBE] [STUDY]
set -euo pipefail

bin=$(realpath "${1:-./deltaprobe}")
study=$(realpath "${2:-studies/fuel.toml}")
reps=${REPS:-"10000 1000000 100000000"}
[ -x /usr/bin/time ] || { echo "scale-bench: needs GNU time at /usr/bin/time" >&2; exit 2; }
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

# measure NAME REPLICATES RESULT CMD...: runs CMD under /usr/bin/time and
# prints one line.
measure() {
	local name=$1 r=$2 result=$3
	shift 3
	/usr/bin/time -f "%M %e" -o "$work/time" "$@" >/dev/null 2>"$work/stderr" || {
		echo "scale-bench: $name at $r failed:" >&2
		tail -n 5 "$work/stderr" >&2
		exit 1
	}
	local kib secs size=-
	read -r kib secs <"$work/time"
	[ -f "$result" ] && size=$(stat -c %s "$result")
	printf '%-8s replicates=%-10s peak_rss_mib=%-6.1f seconds=%-8s result_json_bytes=%s\n' \
		"$name" "$r" "$(echo "$kib / 1024" | bc -l)" "$secs" "$size"
}

echo "# scale-bench: $(date -u +%Y-%m-%dT%H:%M:%SZ), $(nproc) CPUs, load $(cut -d' ' -f1-3 /proc/loadavg), study $(basename "$study")"
for r in $reps; do
	d="$work/$r"
	mkdir -p "$d"
	measure run "$r" "$d/whole/result.json" "$bin" run "$study" -replicates "$r" -o "$d/whole" -quiet -force
	secs=$(cut -d' ' -f2 "$work/time")

	# Interrupted half-way (by the uninterrupted run's time), then resumed.
	"$bin" run "$study" -replicates "$r" -o "$d/part" -quiet -checkpoint 1s >/dev/null 2>&1 &
	pid=$!
	sleep "$(echo "$secs / 2" | bc -l)"
	kill -INT "$pid" 2>/dev/null || true
	wait "$pid" || true
	measure resume "$r" "$d/part/result.json" "$bin" run -resume "$d/part" -quiet
	cmp -s "$d/whole/summary.csv" "$d/part/summary.csv" || { echo "scale-bench: resumed summary.csv differs at $r" >&2; exit 1; }

	# Three shards, merged.
	for k in 0 1 2; do
		"$bin" run "$study" -replicates "$r" -shard "$k/3" -o "$d/shard$k" -quiet -force >/dev/null 2>&1
	done
	measure merge "$r" "$d/merged/result.json" "$bin" merge -o "$d/merged" "$d/shard0" "$d/shard1" "$d/shard2"
	cmp -s "$d/whole/summary.csv" "$d/merged/summary.csv" || { echo "scale-bench: merged summary.csv differs at $r" >&2; exit 1; }

	measure report "$r" "$d/whole/result.json" "$bin" report "$d/whole"
	rm -rf "$d"
done
