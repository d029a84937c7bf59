#!/bin/sh
# The table benchmark (issue 12, part 3): `eval --melt-cards` on invented
# tables of 2e5 and 2e6 melt cards, against the vectorised NumPy R_c of the
# same 2e5 melts (rc_numpy.py, 201 grid points per melt).
#
# Prints, each a median of RUNS runs (default 5) made in this one call, so
# the ratios compare runs under the same load:
#   - wall time of the whole process on 2e5 rows at 1 and 2 threads, and the
#     speed-up (target >= 1.8). The 1-thread run is held to one core
#     (taskset -c 0): beside the pool's one worker, the calling thread reads,
#     finishes and writes, and polars has threads of its own; unpinned they
#     would borrow the second core, and the ratio would no longer say what
#     a second core buys;
#   - the NumPy time for R_c alone, computation only (the anchor), and
#     numpy / quenchwise at 2 threads (target >= 15);
#   - peak memory (max RSS, /usr/bin/time -v) for 2e5 and 2e6 rows at 2
#     threads and their ratio (targets: ratio <= 1.2, 2e6 under 300 MB);
#   - the floor (benches/table_floor.rs): polars' one-shot CSV writer alone
#     writing the results table quenchwise wrote for the 200k rows, nothing
#     computed (and, for scale, reading the input); beside it, the time the
#     15x target allows (numpy / 15).
# The load average before and after states the machine's noise.
#
# Needs: a release build (built here if missing), /usr/bin/python3 with
# numpy (Debian: apt-get install -y python3-numpy), /usr/bin/time (apt-get
# install -y time), taskset (util-linux). Usage: benches/tables/run.sh [RUNS]
set -eu
RUNS=${1:-5}
ROOT=$(cd "$(dirname "$0")/../.." && pwd)
BIN=${QUENCHWISE_BIN:-$ROOT/target/release/quenchwise}
WORK=${TMPDIR:-/tmp}/quenchwise-bench-tables
mkdir -p "$WORK"
[ -x "$BIN" ] || (cd "$ROOT" && cargo build --release --locked)
# Built now, so that no compilation runs between the timed runs.
(cd "$ROOT" && cargo bench --locked --quiet --no-run --bench table_floor)
HERE=$ROOT/benches/tables
[ -f "$WORK/m200k.csv" ] || /usr/bin/python3 "$HERE/gen_melt_cards.py" 200000 "$WORK/m200k.csv"
[ -f "$WORK/m2m.csv" ] || /usr/bin/python3 "$HERE/gen_melt_cards.py" 2000000 "$WORK/m2m.csv"

echo "load average before: $(cut -d' ' -f1-3 /proc/loadavg)"
# One run: prints "seconds max_rss_kb". With a third argument, on that core only.
one() {
    PIN=
    [ -n "${3:-}" ] && PIN="taskset -c $3"
    /usr/bin/time -f "%e %M" -o "$WORK/time.txt" $PIN "$BIN" eval --melt-cards "$1" \
        --out "$WORK/out.csv" --threads "$2" > /dev/null 2> "$WORK/stderr.txt" || {
        cat "$WORK/stderr.txt" >&2
        exit 1
    }
    cat "$WORK/time.txt"
}
: > "$WORK/runs.txt"
i=0
while [ $i -lt "$RUNS" ]; do
    echo "t1 $(one "$WORK/m200k.csv" 1 0)" >> "$WORK/runs.txt"
    echo "t2 $(one "$WORK/m200k.csv" 2)" >> "$WORK/runs.txt"
    i=$((i + 1))
done
cp "$WORK/out.csv" "$WORK/out200k.csv"
i=0
while [ $i -lt "$RUNS" ]; do
    echo "big $(one "$WORK/m2m.csv" 2)" >> "$WORK/runs.txt"
    i=$((i + 1))
done
/usr/bin/python3 "$HERE/rc_numpy.py" "$WORK/m200k.csv" "$RUNS" "$WORK/out200k.csv" > "$WORK/numpy.txt"
(cd "$ROOT" && cargo bench --locked --quiet --bench table_floor -- "$WORK/m200k.csv" "$WORK/out200k.csv" "$RUNS") > "$WORK/floor.txt"
echo "load average after:  $(cut -d' ' -f1-3 /proc/loadavg)"
/usr/bin/python3 - "$WORK/runs.txt" "$WORK/numpy.txt" "$WORK/floor.txt" <<'PY'
import statistics, sys
runs = {}
for line in open(sys.argv[1]):
    k, s, kb = line.split()
    runs.setdefault(k, []).append((float(s), int(kb)))
numpy = dict(l.split(None, 1) for l in open(sys.argv[2]))
floor = dict(l.split(None, 1) for l in open(sys.argv[3]))
med = lambda k, i: statistics.median(r[i] for r in runs[k])
t1, t2 = med("t1", 0), med("t2", 0)
n = float(numpy["numpy_rc_seconds_median"])
m_small, m_big = med("t2", 1) / 1024, med("big", 1) / 1024
print("runs per figure: %d (medians)" % len(runs["t1"]))
print("200k rows, whole process, 1 thread, 1 core: %.2f s   (all: %s)" % (t1, " ".join("%.2f" % r[0] for r in runs["t1"])))
print("200k rows, whole process, 2 threads:  %.2f s         (all: %s)" % (t2, " ".join("%.2f" % r[0] for r in runs["t2"])))
print("speed-up 2 threads / 1 thread:        %.2f   (target >= 1.8)" % (t1 / t2))
print("anchor: numpy R_c alone, 200k melts:  %.2f s   (all: %s)" % (n, numpy["numpy_rc_seconds_all"].strip()))
print("numpy / quenchwise (2 threads):       %.2f   (target >= 15)" % (n / t2))
fl = float(floor["write_seconds_median"])
print("floor: polars writes the same results (%d MB), nothing computed: %.2f s   (reading the input: %.3f s)"
      % (int(floor["bytes_written"]) / 1e6, fl, float(floor["read_seconds_median"])))
print("time the 15x target allows (numpy / 15): %.2f s; floor / allowed = %.2f" % (n / 15, fl / (n / 15)))
print("numpy R_c vs quenchwise R_c:          median |ratio - 1| = %s" % numpy["median_relative_difference_to_quenchwise"].strip())
print("peak memory 200k rows (2 threads):    %.0f MB" % m_small)
print("peak memory 2M rows (2 threads):      %.0f MB   (target < 300 MB)   2M time %.2f s" % (m_big, med("big", 0)))
print("peak memory ratio 2M / 200k:          %.2f   (target <= 1.2)" % (m_big / m_small))
PY
