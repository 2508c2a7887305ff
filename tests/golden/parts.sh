#!/bin/sh
# Monte Carlo in parts (SPEC section 8, issue 13): for M = 1, 2, 3 and 7, the
# parts run one by one (--part K/M --samples-out), merged in reverse order,
# must give the report of one run over all the samples byte for byte, JSON
# and text, and the same exit code; each part's file holds exactly its
# indices, with the columns SPEC section 8 names, and the same rows as one
# run's file. The merged report is then recomputed from the samples with
# numpy and scipy (statistics, yield, Clopper-Pearson interval, the worst
# sample). A missing part, a duplicated one and files of another run are
# refused with exit code 2, a message naming the file, and nothing on stdout.
LW=${1:-./loopwise}
. tests/golden/lib.sh

F=tests/golden/mc_mixed.loop
RUN="--samples 300 --seed 3 --pm 30 --gm 3 --yield 40%"

"$LW" montecarlo $F $RUN --json >"$tmp/one.json" 2>/dev/null
one_rc=$?
"$LW" montecarlo $F $RUN >"$tmp/one.txt" 2>/dev/null
"$LW" montecarlo $F $RUN --samples-out "$tmp/all.csv" --json >"$tmp/all.json" 2>/dev/null
[ $one_rc = 1 ] && ok || bad "the single run exits $one_rc; the test expects its --yield missed (1)"
cmp -s "$tmp/one.json" "$tmp/all.json" && ok || bad "--samples-out changed the JSON report"

for M in 1 2 3 7; do
    files=""
    K=1
    while [ $K -le $M ]; do
        "$LW" montecarlo $F $RUN --part $K/$M --samples-out "$tmp/p$K-$M.csv" >"$tmp/o" 2>"$tmp/e"
        rc=$?
        [ $rc -le 1 ] && [ ! -s "$tmp/e" ] && ok || bad "part $K/$M: exit $rc: $(head -n 1 "$tmp/e")"
        grep -q "part $K of $M" "$tmp/o" && ok || bad "part $K/$M: the text does not say which part"
        files="$tmp/p$K-$M.csv $files"   # merged in reverse order
        K=$((K + 1))
    done
    "$LW" montecarlo $F --pm 30 --gm 3 --yield 40% --merge $files --json >"$tmp/m.json" 2>"$tmp/e"
    rc=$?
    [ $rc = $one_rc ] && ok || bad "M=$M: merge exits $rc, one run $one_rc"
    cmp -s "$tmp/one.json" "$tmp/m.json" && ok || bad "M=$M: merged JSON differs from one run"
    "$LW" montecarlo $F --pm 30 --gm 3 --yield 40% --merge $files >"$tmp/m.txt" 2>&1
    cmp -s "$tmp/one.txt" "$tmp/m.txt" && ok || bad "M=$M: merged text differs from one run"
    # each part holds its own indices, and the rows are one run's rows
    $PY - "$tmp/all.csv" $M $files <<'PYEOF' && ok || bad "M=$M: the parts' files"
import sys
allf, m, parts = sys.argv[1], int(sys.argv[2]), sys.argv[3:]
def rows(path):
    head = [l for l in open(path) if l.startswith("#")]
    body = [l.rstrip("\n") for l in open(path) if not l.startswith("#")]
    return head, body[0], body[1:]
_, cols, every = rows(allf)
want = "index,a,rp,phase_margin_deg,crossover_hz,gain_margin_db,stable,pass"
assert cols == want, cols
got = []
for p in parts:
    head, c, body = rows(p)
    assert c == want, (p, c)
    k = int([h for h in head if h.startswith("# part ")][0].split()[2].split("/")[0])
    idx = [int(r.split(",")[0]) for r in body]
    assert idx == list(range(k - 1, 300, m)), (p, idx[:5])
    got += body
got.sort(key=lambda r: int(r.split(",")[0]))
assert got == every, "rows differ from one run's"
PYEOF
done

# --merge with --samples-out writes the whole run's file, which merges alone.
"$LW" montecarlo $F --pm 30 --gm 3 --yield 40% --merge $files --samples-out "$tmp/merged.csv" \
    >/dev/null 2>&1
"$LW" montecarlo $F --pm 30 --gm 3 --yield 40% --merge "$tmp/merged.csv" --json >"$tmp/m1.json" 2>&1
cmp -s "$tmp/one.json" "$tmp/m1.json" && ok || bad "a merged file merged again differs"
[ "$(grep -v '^#' "$tmp/merged.csv")" = "$(grep -v '^#' "$tmp/all.csv")" ] && ok ||
    bad "the merged samples file differs from one run's"

# The report against the samples themselves: numpy and scipy recompute it.
$PY - "$tmp/all.csv" "$tmp/one.json" <<'PYEOF' && ok || bad "merged report against numpy/scipy"
import csv, json, math, sys
import numpy as np
from scipy.stats import beta
rows = list(csv.DictReader(l for l in open(sys.argv[1]) if not l.startswith("#")))
rep = json.load(open(sys.argv[2]))
num = lambda s: float(s) if s else math.nan
n = len(rows)
valid = [r for r in rows if r["stable"]]
def meets(r):   # SPEC 5: stable, pm >= target, gm >= target or unbounded (empty)
    pm, gm = num(r["phase_margin_deg"]), num(r["gain_margin_db"])
    return r["stable"] == "true" and not math.isnan(pm) and pm >= 30 and (math.isnan(gm) or gm >= 3)
x = sum(meets(r) for r in valid)
def close(a, b, what, tol=1e-12):
    if a is None or b is None:
        assert a is None and b is None, (what, a, b)
    else:
        assert abs(a - b) <= tol * max(1.0, abs(b)), (what, a, b)
assert rep["samples"] == n == 300 and rep["passes"] == x, (rep["passes"], x)
assert rep["invalid"] == n - len(valid)
close(rep["yield"], x / n, "yield")
# Clopper and Pearson (1934): beta quantiles
close(rep["yield_ci95"][0], beta.ppf(0.025, x, n - x + 1), "ci low", 1e-9)
close(rep["yield_ci95"][1], beta.ppf(0.975, x + 1, n - x), "ci high", 1e-9)
close(rep["yield_lower95"], beta.ppf(0.05, x, n - x + 1), "lower95", 1e-9)
for key, col in (("phase_margin_deg", "phase_margin_deg"), ("gain_margin_db", "gain_margin_db"),
                 ("crossover_hz", "crossover_hz")):
    v = np.array([num(r[col]) for r in valid])
    v = v[~np.isnan(v)]
    s = rep[key]
    assert s["n"] == len(v)
    close(s["mean"], float(np.mean(v)), key + " mean")
    close(s["sigma"], float(np.std(v, ddof=1)), key + " sigma")
    close(s["min"], float(v.min()), key + " min", 0)
    close(s["max"], float(v.max()), key + " max", 0)
    for p in (1, 5, 50, 95, 99):   # linear interpolation between order statistics
        close(s["p%d" % p], float(np.quantile(v, p / 100)), "%s p%d" % (key, p))
# the worst sample: the least distance to the targets, the first of equals; an
# unstable sample below every stable one, one without a crossover below every one
# with a phase margin (and ranked by its gain margin among them)
def dist(r):
    pm, gm = num(r["phase_margin_deg"]), num(r["gain_margin_db"])
    d = pm - 30
    if math.isnan(pm):
        d = -1e3 + max(-500.0, min(500.0, 0.0 if math.isnan(gm) else gm - 3))
    if not math.isnan(gm):
        d = min(d, gm - 3)
    if r["stable"] != "true":
        d = min(d, 0.0) - 1e4
    return d
worst = min(valid, key=lambda r: (dist(r), int(r["index"])))
assert rep["worst"]["index"] == int(worst["index"]) + 1, (rep["worst"]["index"], worst["index"])
PYEOF

# A missing part, a duplicated one, and parts of another run.
p7="$tmp/p1-7.csv $tmp/p2-7.csv $tmp/p3-7.csv $tmp/p5-7.csv $tmp/p6-7.csv $tmp/p7-7.csv"
refuse "part 4/7 is missing" montecarlo $F --merge $p7
refuse "43 of the 300 samples are in no file given (index 3, 10, 17, ...)" montecarlo $F --merge $p7
cp "$tmp/p2-3.csv" "$tmp/copy.csv"
refuse "copy.csv:8:1: sample index 1 was already read at $tmp/p2-3.csv:8" \
    montecarlo $F --merge "$tmp/p1-3.csv" "$tmp/p2-3.csv" "$tmp/p3-3.csv" "$tmp/copy.csv"
refuse "is a part given twice?" \
    montecarlo $F --merge "$tmp/p1-3.csv" "$tmp/p2-3.csv" "$tmp/p3-3.csv" "$tmp/copy.csv"
refuse "(the file is given twice)" montecarlo $F --merge "$tmp/p1-2.csv" "$tmp/p2-2.csv" "$tmp/p1-2.csv"
head -n 40 "$tmp/p2-3.csv" >"$tmp/short.csv"
refuse "holds 33 of the 100 samples of part 2/3: was its run cut short?" \
    montecarlo $F --merge "$tmp/p1-3.csv" "$tmp/short.csv" "$tmp/p3-3.csv"
refuse "p1-3.csv:3:15: this part was run on another description" \
    montecarlo tests/golden/ring3.loop --merge "$tmp/p1-3.csv"
refuse "this part was run without --set a=1.5, the merge with it" \
    montecarlo $F --set a=1.5 --merge "$tmp/p1-3.csv"
refuse "this part belongs to a run of 300 samples, the other parts (or --samples) to one of 200" \
    montecarlo $F --samples 200 --merge "$tmp/p1-3.csv"
"$LW" montecarlo $F --samples 300 --seed 4 --part 1/2 --samples-out "$tmp/s4.csv" >/dev/null 2>&1
refuse "this part was drawn with seed 4, the other parts (or --seed) with 3" \
    montecarlo $F --merge "$tmp/p2-2.csv" "$tmp/s4.csv"
refuse "not a file of samples written by 'loopwise montecarlo --samples-out'" montecarlo $F --merge $F
sed '12s/,true,/,yes,/' "$tmp/p1-3.csv" >"$tmp/bad.csv"
refuse "bad.csv:12:" montecarlo $F --merge "$tmp/bad.csv" "$tmp/p2-3.csv" "$tmp/p3-3.csv"
refuse "--merge reports on parts already run; --part runs one" \
    montecarlo $F --samples 300 --part 1/3 --samples-out "$tmp/x.csv" --merge "$tmp/p1-3.csv"
refuse "--part K/M runs one part for a later --merge: give --samples-out PATH" \
    montecarlo $F --samples 300 --part 1/3
refuse "--part takes K/M, part K of M with 1 <= K <= M (e.g. 3/8), got '4/3'" montecarlo $F --samples 300 --part 4/3 --samples-out "$tmp/x.csv"
refuse "--part 1/7: 7 parts of 5 samples leave parts empty" \
    montecarlo $F --samples 5 --part 1/7 --samples-out "$tmp/x.csv"
[ ! -e "$tmp/x.csv" ] && ok || bad "a refused run wrote its samples file"

echo "parts: $pass passed, $fail failed"
[ "$fail" = 0 ]
