#!/bin/sh
# Peak memory and disk of a whole `screen` run of the demo config
# (configs/demo-screen.toml) at several first-pass sizes (issue 12, parts 4
# and 5: memory flat from 1e6 to 1e8 candidates; checkpoints of a finished
# run removed, a compact candidates table).
#
# Prints, per size: wall and CPU time, peak memory (max RSS, /usr/bin/time),
# what is left in OUT/.work and the size of the candidates table (bytes per
# row). One run per size: memory hardly varies between runs, times do (the
# machine is shared; the load average before and after is printed).
#
# Needs: a release build (QUENCHWISE_BIN, default target/release/quenchwise),
# /usr/bin/time (Debian: apt-get install -y time).
# Usage: benches/screen/memory.sh [POINTS...]   (default: 100000 1000000)
set -eu
ROOT=$(cd "$(dirname "$0")/../.." && pwd)
BIN=${QUENCHWISE_BIN:-$ROOT/target/release/quenchwise}
WORK=${TMPDIR:-/tmp}/quenchwise-bench-screen-memory
THREADS=${THREADS:-2}
mkdir -p "$WORK"
[ -x "$BIN" ] || { echo "no release build at $BIN (cargo build --release, or set QUENCHWISE_BIN)" >&2; exit 1; }
[ $# -gt 0 ] || set -- 100000 1000000
echo "load average before: $(cut -d' ' -f1-3 /proc/loadavg)"
for n in "$@"; do
    sed "s/^first_pass_points = [0-9]*/first_pass_points = $n/" \
        "$ROOT/configs/demo-screen.toml" > "$WORK/demo-$n.toml"
    # The models and raw materials are built in: the config runs from WORK.
    rm -rf "$WORK/out-$n"
    /usr/bin/time -f "%e %U %M" -o "$WORK/time-$n.txt" "$BIN" screen "$WORK/demo-$n.toml" \
        --out "$WORK/out-$n" --threads "$THREADS" > "$WORK/log-$n.txt" 2>&1 || {
        cat "$WORK/log-$n.txt" >&2
        exit 1
    }
    read -r wall cpu kb < "$WORK/time-$n.txt"
    left=$(du -sk "$WORK/out-$n/.work" | cut -f1)
    pq=$(du -cb "$WORK/out-$n"/candidates/part-*.parquet | tail -n 1 | cut -f1)
    parts=$(ls "$WORK/out-$n"/candidates/part-*.parquet | wc -l)
    awk -v n="$n" -v wall="$wall" -v cpu="$cpu" -v kb="$kb" -v left="$left" -v pq="$pq" -v parts="$parts" 'BEGIN {
        printf "%10d candidates: %8.1f s wall, %8.1f s CPU, peak memory %6.0f MB, .work %s kB, candidates/ %.1f MB in %d files (%.0f bytes/row)\n",
            n, wall, cpu, kb / 1024, left, pq / 1048576, parts, pq / n }'
done
echo "load average after:  $(cut -d' ' -f1-3 /proc/loadavg)"
echo "anchors (issue 12): memory flat from 1e6 to 1e8 candidates; a finished demo run left 224 MB in .work"
