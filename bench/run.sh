#!/bin/sh
# Side-by-side benchmark: allot against a pandas/scipy/statsmodels peer on
# the same generated files, one run after the other on this machine.
#
#   sh bench/run.sh [DIR]     (default DIR: a new temporary directory)
#
# Prints a Markdown table of wall time and peak resident memory (from
# /usr/bin/time) for each task, and the peer/allot time ratio (> 1: allot
# is faster). Needs Go and /usr/bin/time; the peer side needs Debian's
# python3-pandas python3-scipy python3-statsmodels (and python3-openpyxl for
# the workbook check) and is skipped without them. CI does not run it.
set -eu
cd "$(dirname "$0")/.."
dir=${1:-$(mktemp -d)}
mkdir -p "$dir"
go build -o "$dir/allot" ./cmd/allot
go run ./bench/gen "$dir"
py=/usr/bin/python3
peer=yes
$py -c 'import pandas, scipy, statsmodels' 2>/dev/null || peer=no

# measure NAME CMD...: run CMD under /usr/bin/time; prints "seconds KiB".
measure() {
	/usr/bin/time -f '%e %M' -o "$dir/time.txt" "$@" >"$dir/out.txt" 2>"$dir/err.txt" || {
		echo "failed: $*" >&2
		cat "$dir/err.txt" >&2
		echo "- -"
		return
	}
	cat "$dir/time.txt"
}

row() { # task, allot command..., then -- peer kind file
	task=$1
	shift
	acmd=""
	while [ "$1" != "--" ]; do
		acmd="$acmd '$1'"
		shift
	done
	shift
	a=$(eval measure $acmd)
	p="- -"
	if [ "$peer" = yes ] && [ "$1" != none ]; then
		p=$(measure $py bench/peer.py "$1" "$2")
	fi
	echo "$task $a $p" | awk '{
		ratio = ($4 == "-" || $2 == 0) ? "–" : sprintf("%.1f", $4 / $2)
		printf "| %s | %s s | %.0f MiB | %s s | %s MiB | %s |\n", $1, $2, $3 / 1024, $4, ($5 == "-" ? "–" : sprintf("%.0f", $5 / 1024)), ratio
	}'
}

echo "| task | allot | allot peak | peer | peer peak | peer/allot |"
echo "|---|---|---|---|---|---|"
row one-way-1e6-rows "$dir/allot" analyze "$dir/oneway1e6.csv" --response y --factor f1 -- oneway "$dir/oneway1e6.csv"
row 3x4x2-in-5-blocks-1e5-rows-typeIII+Tukey "$dir/allot" analyze "$dir/factorial1e5.csv" --response y --factor f1 --factor f2 --factor f3 --block block -- factorial "$dir/factorial1e5.csv"
row Tukey-k10-1000-rows "$dir/allot" analyze "$dir/tukey1000.csv" --response y --factor f1 -- tukey "$dir/tukey1000.csv"
# statsmodels' ols would build a dense 10^5 x 25,000 design matrix (20 GB):
# no peer row.
row 25000-blocks-x4-1e5-units "$dir/allot" analyze "$dir/blocks25000.csv" --response y --factor f1 --block block -- none -
row check-1e5-units "$dir/allot" check "$dir/check1e5.xlsx" -- check "$dir/check1e5.xlsx"
