#!/bin/sh
# 'break NODE' (SPEC 1, issue 18) against its invented-buffer equivalent:
# the same network with a unity buffer (gm 1 S into a 1-ohm node without
# capacitance) in front of the controls of the node's gms, opened at the
# buffer. In the buffer network with the buffer off, a unit current into the
# buffer node is 1 V there, which drives every one of those gms: exactly the
# b = sum g e_OUT of SPEC 1, so T must be the same at every frequency (to
# rounding: the two reductions differ by one capacitance-free node).
LW=${1:-./loopwise}
. tests/golden/lib.sh

net=tests/ref/nets/10_break_node.loop
buf="$tmp/buffer.loop"
# 10_break_node.loop with d1 and d2 controlled by the buffer node cb
{
    grep -v -e '^gm d1' -e '^gm d2' -e '^loop' -e '^break' "$net"
    cat <<'LOOP'
node cb r=1
gm gbuf ctl -> cb 1
gm d1 cb -> o1 -400u
gm d2 cb -> o2 -900u
loop one negative ctl cb o1 x1
loop two negative ctl cb o2 x2
break gbuf
LOOP
} >"$buf"
grep -q '^gm d1 ctl -> o1 -400u$' "$net" && grep -q '^gm d2 ctl -> o2 -900u$' "$net" && ok ||
    bad "$net no longer has the gms this test copies"
"$LW" check "$buf" >/dev/null 2>"$tmp/e"
[ $? = 0 ] && ok || bad "the buffer equivalent does not run: $(head -n 1 "$tmp/e")"
for f in "$net" "$buf"; do
    "$LW" gain "$f" --fmin 1 --fmax 1e10 --points 400 --csv "$tmp/$(basename "$f").csv" >/dev/null ||
        bad "gain $f"
    "$LW" check "$f" --json --fmin 1 --fmax 1e10 >"$tmp/$(basename "$f").json" || bad "check $f"
done
$PY - "$tmp/$(basename "$net").csv" "$tmp/buffer.loop.csv" "$tmp/$(basename "$net").json" \
    "$tmp/buffer.loop.json" <<'PYEOF' && ok || bad "break NODE differs from its buffer equivalent"
import csv, json, sys
a = list(csv.DictReader(open(sys.argv[1])))
b = list(csv.DictReader(open(sys.argv[2])))
assert len(a) == len(b) == 400
for x, y in zip(a, b):
    assert float(x["freq_hz"]) == float(y["freq_hz"])
    # |T| in dB to 1e-9 dB and the phase to 1e-9 degrees: the same T
    assert abs(float(x["mag_db"]) - float(y["mag_db"])) < 1e-9, (x, y)
    assert abs(float(x["phase_deg"]) - float(y["phase_deg"])) < 1e-9, (x, y)
ja, jb = json.load(open(sys.argv[3])), json.load(open(sys.argv[4]))
assert ja["break"] == "ctl" and ja["break_gms"] == ["d1", "d2"], (ja["break"], ja["break_gms"])
assert jb["break"] == "gbuf" and jb["break_gms"] == ["gbuf"]
for k in ("dc_loop_gain", "crossover_hz", "phase_margin_deg", "gain_margin_db"):
    assert abs(ja[k] - jb[k]) <= 1e-9 * abs(jb[k]), (k, ja[k], jb[k])
for k in ("open_loop_zeros", "closed_loop_poles", "open_loop_poles"):
    assert len(ja[k]) == len(jb[k]), k
    for p, q in zip(ja[k], jb[k]):
        m = abs(complex(q["re_hz"], q["im_hz"]))
        assert abs(complex(p["re_hz"], p["im_hz"]) - complex(q["re_hz"], q["im_hz"])) < 1e-7 * m, (k, p, q)
assert ja["stable"] == jb["stable"]
PYEOF

# Every picture takes a node break (the roots' paths close every gm of the
# break together; the titles name the node).
for cmd in gain roots polar; do
    rm -f "$tmp/b.svg"
    "$LW" $cmd "$net" -o "$tmp/b.svg" >/dev/null 2>"$tmp/e"
    [ $? = 0 ] && grep -q "opened at node ctl\|Roots of the loop" "$tmp/b.svg" && ok ||
        bad "$cmd -o with break NODE: $(head -n 1 "$tmp/e")"
done

# Refusals: a node that controls no gm; no common gm and no common node.
printf 'node a r=1k c=1p\nnode bias r=1k c=1p\ngm g1 a -> bias 1m\ngm g2 bias -> a -1m\nbreak bais\n' >"$tmp/x.loop"
refuse "unknown gm or node 'bais' (did you mean 'bias'?)" check "$tmp/x.loop"

echo "breaknode: $pass passed, $fail failed"
echo "$pass passed, $fail failed"
[ "$fail" = 0 ]
