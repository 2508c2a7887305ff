#!/bin/sh
# The driver behind 'make bench': builds the benchmark against the library,
# writes the networks, times the numpy/scipy reference, then times loopwise
# and prints both side by side. Nothing here asserts on a time.
#
#   BENCH_BUDGET=S   seconds each measurement is repeated for (default 0.5)
#   BENCH_FULL=1     also the long sweeps: 200 points at 128 nodes is the
#                    default; FULL adds 20 points at 512 nodes (about an hour
#                    on a 2-core machine, most of it in the reference)
#   BENCH_SIZES="8 32", BENCH_SWEEPS="8=100"   a quick trial run
set -eu
cd "$(dirname "$0")/.."
OUT=build/bench
PY=/usr/bin/python3
BUDGET=${BENCH_BUDGET:-0.5}
SIZES=${BENCH_SIZES:-8 32 128 512}
SWEEPS=${BENCH_SWEEPS:-8=2000 32=2000 128=200}
[ "${BENCH_FULL:-0}" = 1 ] && SWEEPS="$SWEEPS 512=20"
start=$(date +%s)
load_before=$(cut -d' ' -f1-3 /proc/loadavg)

mkdir -p "$OUT"
make --no-print-directory build/libloopwise.a >/dev/null
echo "  CC      bench/bench.c"
${CC:-cc} -std=c11 -D_POSIX_C_SOURCE=200809L -Wall -Wextra -Wshadow -Wconversion \
    -Wstrict-prototypes -Wmissing-prototypes -Wno-sign-conversion -O2 -g -fopenmp -Iinclude \
    $(pkg-config --cflags gsl lapacke) -o "$OUT/bench" bench/bench.c build/libloopwise.a \
    $(pkg-config --libs gsl lapacke) -lm

echo "  GEN     networks (seeded) into $OUT"
$PY bench/gen_net.py "$OUT" $SIZES
NETS=""
for n in $SIZES; do NETS="$NETS $OUT/chain$n.loop"; done
SWEEP_ARGS=""
for s in $SWEEPS; do SWEEP_ARGS="$SWEEP_ARGS --sweep $s"; done

# The reference runs without the OpenBLAS tuning variables the environment
# may carry (in this command only).
echo "  REF     numpy/scipy reference (sweeps: $SWEEPS)"
env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE $PY bench/ref_bench.py --budget "$BUDGET" \
    $SWEEP_ARGS $NETS >"$OUT/ref.json"
echo "  RUN     loopwise"
"$OUT/bench" --budget "$BUDGET" --ref "$OUT/ref.json" $SWEEP_ARGS $NETS

$PY - "$OUT/ref.json" <<'EOF'
import json, sys
r = json.load(open(sys.argv[1]))
blas = r.get("blas", "")
kind = "OpenBLAS" if "openblas" in blas else \
    "Debian's reference (netlib) BLAS/LAPACK, single-threaded" if "/blas/" in blas else "?"
print("reference: numpy %s, scipy %s on %s\n  (%s); OPENBLAS_* in its environment: %s"
      % (r.get("numpy"), r.get("scipy"), kind, blas, r.get("blas_env")))
EOF
case " $SIZES " in
*" 512 "*) case " $SWEEPS " in
    *" 512="*) ;;
    *) echo "512 nodes: sweep not run by default (a point costs about one check on each" \
            "side); BENCH_FULL=1 runs 20 points." ;;
    esac ;;
esac
# Closed-loop responses (issue 11): 'response --step' and '--inject each'
# on the 32- and 128-node networks, and a 200-point 'sweep --to' at 32 nodes,
# against the same figures done the ordinary way (bench/ref_response.py).
echo
echo "  CC      bench/bench_response.c"
${CC:-cc} -std=c11 -D_POSIX_C_SOURCE=200809L -Wall -Wextra -Wshadow -Wconversion \
    -Wstrict-prototypes -Wmissing-prototypes -Wno-sign-conversion -O2 -g -fopenmp -Iinclude \
    $(pkg-config --cflags gsl lapacke) -o "$OUT/bench_response" bench/bench_response.c \
    build/libloopwise.a $(pkg-config --libs gsl lapacke) -lm
RESP_NETS=""
for n in 32 128; do
    [ -f "$OUT/chain$n.loop" ] || $PY bench/gen_net.py "$OUT" $n >/dev/null
    RESP_NETS="$RESP_NETS $OUT/chain$n.loop"
done
echo "  REF     numpy/scipy responses (sweep --to: 32=200)"
env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE $PY bench/ref_response.py --budget "$BUDGET" \
    --sweep 32=200 $RESP_NETS >"$OUT/ref_response.json"
"$OUT/bench_response" --budget "$BUDGET" --ref "$OUT/ref_response.json" --sweep 32=200 $RESP_NETS

# Monte Carlo: 100,000 samples of a ten-node loop (bench/mc10.loop), both
# cores, timed as the command runs; three runs, because on a shared machine
# one run can land on a busy core.
echo
echo "Monte Carlo: 100000 samples of bench/mc10.loop (10 nodes), $(nproc) cores, three runs:"
for run in 1 2 3; do
    mc_start=$(date +%s.%N)
    ./loopwise montecarlo bench/mc10.loop --samples 100000 --seed 1 --pm 45 >/dev/null
    mc_end=$(date +%s.%N)
    echo "$mc_start $mc_end"
done | $PY -c "
import sys
t = sorted(float(b) - float(a) for a, b in (l.split() for l in sys.stdin))
print('  runs: ' + ', '.join('%.2f s' % x for x in t))
print('  median %.2f s wall, %.1f us of wall time per sample on the two cores (target: under 3 s)' % (t[1], t[1] / 1e5 * 1e6))"
# Design across variation (issue 18), timed as the commands run, three runs
# each, wall and CPU time (a loaded machine stretches the wall time; the
# start of the process alone is some 10 ms): a 50 x 50 map of the ten-node
# loop (2,500 analyses and the refined boundary, rows on both cores), and
# size --over corners with 16 corners.
timed3() {
    $PY - "$@" <<'PYEOF'
import resource, subprocess, sys, time
target, argv = sys.argv[1], sys.argv[2:]
runs = []
for _ in range(3):
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.monotonic()
    subprocess.run(argv, stdout=subprocess.DEVNULL)
    wall = time.monotonic() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    runs.append((wall, cpu))
runs.sort()
print("  runs: " + ", ".join("%.3f s (CPU %.3f s)" % r for r in runs))
print("  median %.3f s wall, CPU %.3f s (target: under %s)" % (runs[1] + (target,)))
PYEOF
}
echo
echo "Map: sweep bench/mc10.loop over cc x gmp, 50 x 50 points, $(nproc) cores, three runs:"
timed3 "1 s" ./loopwise sweep bench/mc10.loop --vary cc --from 0.1p --to 10p --vary gmp \
    --from 2m --to 200m --points 50 --json
echo "Size over corners: bench/corners16.loop, tune cc over 16 corners for 45 degrees, three runs:"
timed3 "100 ms" ./loopwise size bench/corners16.loop --tune cc --within 0.1p..20p \
    --over corners --pm 45
echo "load average before: $load_before, after: $(cut -d' ' -f1-3 /proc/loadavg);" \
     "whole run $(( $(date +%s) - start )) s"
