#!/bin/sh
# Command-line tests of what the design commands conclude and advise: the
# verdict of size, load and size --over corners must follow from the figures
# they computed, and the command they suggest must be one a designer can run.
# Expected values come from closed forms of tests/golden/ring3.loop (three
# equal poles, loop gain a^3: for a > 1 the phase margin is
# 180 - 3 atan(sqrt(a^2 - 1)) degrees; no crossover for a <= 1) and of the
# networks written below.
LW=${1:-./loopwise}
. tests/golden/lib.sh
G=tests/golden
RING=$G/ring3.loop

# ---- a break inside a local loop ---------------------------------------------
# A two-stage amplifier in unity feedback with its Miller capacitor across the second
# stage, the second stage declared first (cases/miller.loop), so that without a break
# line the loop is opened at g2, whose IN and OUT the capacitor joins. Opened at the node inn (the IN of
# g1, tied to out by the feedback wire, with no capacitance), T is the textbook
# two-stage transfer (exact for this network, from memory):
#   T(s) = gm1 R1 gm2 R2 (1 - s Cc/gm2) / (1 + a s + b s^2),
#   a = R1 (C1 + Cc) + R2 (C2 + Cc) + gm2 R1 R2 Cc,  b = R1 R2 (C1 C2 + Cc (C1 + C2)),
# the outer loop's; the default break gives another margin, and check, size and sweep say so.
# (cases/miller.loop, whose values the closed form below repeats)
grep -v '^#' cases/miller.loop >"$tmp/miller.loop"
note="  note: a capacitor 'cc' joins x1 and out across gm 'g2', so opening the loop there opens that local loop too and the margin is not the outer loop's; add 'break inn' to open the outer loop at a node"
"$LW" check "$tmp/miller.loop" >"$tmp/m.txt" 2>/dev/null
grep -qxF "$note" "$tmp/m.txt" && grep -q "^Loop gain T, opened at gm 'g2' (x1 -> out)$" "$tmp/m.txt" &&
    ok || bad "check: no note on a break across a Miller capacitor"
for cmd in "size --tune cc" "sweep --vary cc --from 0.4p --to 1.6p --points 3"; do
    "$LW" $cmd "$tmp/miller.loop" >"$tmp/m2.txt" 2>/dev/null
    grep -qxF "$note" "$tmp/m2.txt" && ok || bad "$cmd: no note on a break across a Miller capacitor"
done
(cat "$tmp/miller.loop"; echo "break inn") >"$tmp/miller_inn.loop"
"$LW" check "$tmp/miller_inn.loop" >"$tmp/m3.txt" 2>/dev/null
! grep -q "note: " "$tmp/m3.txt" && ok || bad "check: a note on the suggested break"
"$LW" check "$tmp/miller_inn.loop" --json >"$tmp/inn.json" 2>/dev/null
"$LW" check "$tmp/miller.loop" --json >"$tmp/g2.json" 2>/dev/null
$PY - "$tmp/inn.json" "$tmp/g2.json" <<'PYEOF' && ok || bad "the suggested break gives the outer loop's margin"
import json, math, sys
import numpy as np
inn, g2 = json.load(open(sys.argv[1])), json.load(open(sys.argv[2]))
gm1, gm2, R1, C1, R2, C2, Cc = 100e-6, 2e-3, 1e6, 100e-15, 50e3, 3e-12, 0.8e-12
A0 = gm1 * R1 * gm2 * R2
a = R1 * (C1 + Cc) + R2 * (C2 + Cc) + gm2 * R1 * R2 * Cc
b = R1 * R2 * (C1 * C2 + Cc * (C1 + C2))
# |T(jw)| = 1: A0^2 (1 + (w Cc/gm2)^2) = (1 - b w^2)^2 + (a w)^2, a polynomial in u = w^2
poly = [b * b, a * a - 2 * b - A0 * A0 * (Cc / gm2) ** 2, 1 - A0 * A0]
u = max(r.real for r in np.roots(poly) if abs(r.imag) < 1e-9 * abs(r) and r.real > 0)
w = math.sqrt(u)
pm = 180 - math.degrees(math.atan(w * Cc / gm2)) - math.degrees(math.atan2(a * w, 1 - b * w * w))
assert abs(inn["dc_loop_gain"] - A0) < 1e-9 * A0, inn["dc_loop_gain"]
assert abs(inn["crossover_hz"] - w / (2 * math.pi)) < 1e-7 * inn["crossover_hz"], (inn["crossover_hz"], w / (2 * math.pi))
assert abs(inn["phase_margin_deg"] - pm) < 1e-6, (inn["phase_margin_deg"], pm)
assert g2["break"] == "g2" and abs(g2["phase_margin_deg"] - pm) > 1, (g2["phase_margin_deg"], pm)
PYEOF

# ---- size: a target already met at the lower end of the range -------------
# a = 1.05 gives 180 - 3 atan(sqrt(1.05^2 - 1)) = 126.7 deg, and a = 1.02 (below the
# range) 145.9 deg: the smallest a meeting 60 deg lies below 1.05 (it is 1, where the
# crossover appears), so size must not present 1.05 as the smallest value.
"$LW" size $RING --tune a --within 1.05..1.2 --json >"$tmp/s.json" 2>/dev/null
"$LW" size $RING --tune a --within 1.05..1.2 >"$tmp/s.txt" 2>/dev/null
rc=$?
$PY - "$tmp/s.json" <<'PYEOF' && ok || bad "size: met at the lower end (JSON)"
import json, math, sys
d = json.load(open(sys.argv[1]))
pm = lambda a: 180 - 3 * math.degrees(math.atan(math.sqrt(a * a - 1)))
assert d["met"] is True and d["met_at_low_end"] is True, d
assert abs(d["value"] - 1.05) < 1e-12 and abs(d["phase_margin_deg"] - pm(1.05)) < 1e-6, d
assert pm(1.02) >= 60          # a value below the range meets too
PYEOF
[ $rc = 0 ] && grep -q "^  answer          a = 1.05, the lower end of the range$" "$tmp/s.txt" &&
    grep -q "^Verdict: the target is already met at the lower end of the range, a = 1.05: the smallest value that meets it lies below; widen --within (e.g. --within 10.5m..1.2).$" "$tmp/s.txt" &&
    ok || bad "size: met at the lower end (text, exit $rc)"
# ... and over corners: the ring with a third stage of gain a b, b in 0.95..1.05, has
# the loop gain a^3 b, so each corner is the ring at a (b)^(1/3); the worst corner
# (b = 1.05) at a = 1.05 still has 118.7 deg
sed -e 's|^gm g3 n3 -> n1  -a/10k|gm g3 n3 -> n1  -a*b/10k|' -e 's|^param a = 1.5 .*|param a = 1.5\nparam b = 1 corners 0.95..1.05|' $RING >"$tmp/ringb.loop"
"$LW" size "$tmp/ringb.loop" --tune a --within 1.05..1.2 --over corners --json >"$tmp/c.json" 2>/dev/null
$PY - "$tmp/c.json" <<'PYEOF' && ok || bad "size --over corners: met at the lower end"
import json, math, sys
d = json.load(open(sys.argv[1]))
pm = lambda a: 180 - 3 * math.degrees(math.atan(math.sqrt(a * a - 1)))
assert d["met"] is True and d["met_at_low_end"] is True and abs(d["value"] - 1.05) < 1e-12, d
worst = min(c["phase_margin_deg"] for c in d["corners"])
assert abs(worst - pm(1.05 * 1.05 ** (1 / 3))) < 1e-6, worst
PYEOF
# a range whose lower end misses: no such note
"$LW" size $RING --tune a --within 0.5..1.2 --json >"$tmp/s2.json" 2>/dev/null
$PY -c "import json,sys; d=json.load(open(sys.argv[1])); assert d['met'] and not d['met_at_low_end'] and d['value'] > 1, d" "$tmp/s2.json" &&
    ok || bad "size: a range whose lower end misses is flagged as met there"

# ---- size --over corners, target out of reach: where the worst case is best -----
# The ring with its first stage's gain times v^b, b in -1..1: the loop gain is 1.5^3 v
# at one corner and 1.5^3 / v at the other, so the worst-case margin is largest at v = 1,
# where both corners have the ring's 180 - 3 atan(sqrt(1.5^2 - 1)) = 35.43 deg: below
# 60 deg, so the target is out of reach, and the answer must be v = 1 (refined, not a
# grid value: the log grid from 13m to 130 does not hold 1), with both corners named.
sed -e 's|^gm g1 n1 -> n2  -a/10k|gm g1 n1 -> n2  -a*v^b/10k|' \
    -e 's|^param a = 1.5 .*|param a = 1.5\nparam v = 1.3\nparam b = 0 corners -1..1|' $RING >"$tmp/ringv.loop"
"$LW" size "$tmp/ringv.loop" --tune v --over corners --json >"$tmp/v.json" 2>/dev/null
"$LW" size "$tmp/ringv.loop" --tune v --over corners >"$tmp/v.txt" 2>/dev/null
rc=$?
$PY - "$tmp/v.json" "$tmp/v.txt" <<'PYEOF' && ok || bad "size --over corners: the best worst case when out of reach"
import json, math, sys
d, text = json.load(open(sys.argv[1])), open(sys.argv[2]).read()
pm = 180 - 3 * math.degrees(math.atan(math.sqrt(1.5 ** 2 - 1)))
assert d["met"] is False and abs(d["value"] - 1) < 1e-5, d["value"]
assert abs(d["phase_margin_deg"] - pm) < 1e-3, d["phase_margin_deg"]
# the reported margin is the worst corner's at that value
assert d["phase_margin_deg"] == min(c["phase_margin_deg"] for c in d["corners"])
assert d["limiting_index"] == d["corners"][0]["index"]
assert "  TARGET NOT REACHABLE in the range: the worst corner comes nearest at v = 1\n" in text
assert "  and corner #%d, as near: the two limit together there\n" % (3 - d["limiting_index"]) in text
assert ("Verdict: no value in the range meets the reference at every corner; the best worst case "
        "is %.2f\u00b0 (corner #%d) at v = 1;" % (pm, d["limiting_index"])) in text
PYEOF
[ $rc = 1 ] && ok || bad "size --over corners out of reach: exit $rc, expected 1"

# ---- load: the margin may rise with the load ------------------------------
# Two equal stages of gain a = 10 (R = 10k, C = 1p): T = a^2 / ((1 + s/p1)(1 + s/p2)),
# p2 = 1/(R C), p1 = 1/(R (C + CL)) with the load CL at x. |T(jw)| = 1 is a quadratic
# in w^2, and the margin 180 - atan(w/p1) - atan(w/p2) rises with CL (the poles split):
# loads below the CL* where it is 60 deg miss, every load above meets.
cat >"$tmp/twopole.loop" <<'LOOP'
param a = 10
node x r=10k c=1p
node y r=10k c=1p
gm g1 x -> y -a/10k
gm g2 y -> x a/10k
loop l negative x y
LOOP
"$LW" load "$tmp/twopole.loop" --node x --cload 1p..1n --pm 60 --json >"$tmp/l.json" 2>/dev/null
"$LW" load "$tmp/twopole.loop" --node x --cload 1p..1n --pm 60 >"$tmp/l.txt" 2>/dev/null
rc=$?
$PY - "$tmp/l.json" "$tmp/l.txt" <<'PYEOF' && ok || bad "load: a margin that rises with the load"
import json, math, sys
from scipy.optimize import brentq
d, text = json.load(open(sys.argv[1])), open(sys.argv[2]).read()
R, C, a = 10e3, 1e-12, 10.0
def pm(cl):
    p1, p2 = 1 / (R * (C + cl)), 1 / (R * C)
    # (1 + u/p1^2)(1 + u/p2^2) = a^4, u = w^2
    A, B, K = 1 / (p1 * p2) ** 2, 1 / p1 ** 2 + 1 / p2 ** 2, 1 - a ** 4
    u = (-B + math.sqrt(B * B - 4 * A * K)) / (2 * A)
    w = math.sqrt(u)
    return 180 - math.degrees(math.atan(w / p1) + math.atan(w / p2))
cl_star = brentq(lambda c: pm(c) - 60, 1e-12, 1e-9, xtol=1e-20, rtol=1e-12)
for p in d["points"]:
    assert abs(p["phase_margin_deg"] - pm(p["value"])) < 1e-6, (p, pm(p["value"]))
assert d["met"] is False and d["max_load_f"] == 1e-9, d["max_load_f"]
assert len(d["met_ranges"]) == 1, d["met_ranges"]
lo, hi = d["met_ranges"][0]
assert abs(lo / cl_star - 1) < 1e-5 and hi == 1e-9, (lo, cl_star)
want = "Verdict: the 60\u00b0 target is met for loads from %.3g pF to 1 nF." % (cl_star * 1e12)
assert want in text, want
assert "  Loads below %.3g pF miss it: the margin rises as the load grows there." % (cl_star * 1e12) in text
assert "  The largest load that meets it is the 1 nF asked for." in text
assert "even 1 pF" not in text
PYEOF
[ $rc = 1 ] && ok || bad "load: some loads miss a given --pm: exit $rc, expected 1"
# its picture from just below CL*: the crossing's label and the smallest margin's, both
# under the goal line at the left, stand on different lines
"$LW" load "$tmp/twopole.loop" --node x --cload 130p..1n --pm 60 -o "$tmp/tp.png" --keep-script "$tmp/ktp" >/dev/null 2>&1
$PY - "$tmp/ktp/plot.gp" <<'PYEOF' && ok || bad "load -o: the crossing's and the smallest margin's labels overlap"
import re, sys
gp = open(sys.argv[1]).read()
ys = [float(re.search(r'"%s[^"]*".* offset -?[0-9.]+,(-?[0-9.]+)' % w, gp).group(1))
      for w in ("rises through 60", "smallest margin")]
assert ys[0] < 0 and ys[1] < 0 and abs(ys[0] - ys[1]) >= 1.2, ys
PYEOF
# the same loop with the margin falling: loads on node x of the equal-pole loop above
# cannot be made to fall, so a load at y of a loop whose x already dominates (x at
# 1 nF) closes the met range from above: 60 deg at the CL* of the mirrored closed form
sed -e 's/^node x r=10k c=1p/node x r=10k c=1n/' "$tmp/twopole.loop" >"$tmp/falls.loop"
"$LW" load "$tmp/falls.loop" --node y --cload 1p..1n --pm 60 --json >"$tmp/f.json" 2>/dev/null
$PY - "$tmp/f.json" <<'PYEOF' && ok || bad "load: a margin that falls with the load"
import json, math, sys
from scipy.optimize import brentq
d = json.load(open(sys.argv[1]))
R, a = 10e3, 10.0
def pm(cl):
    p1, p2 = 1 / (R * 1e-9), 1 / (R * (1e-12 + cl))
    A, B, K = 1 / (p1 * p2) ** 2, 1 / p1 ** 2 + 1 / p2 ** 2, 1 - a ** 4
    w = math.sqrt((-B + math.sqrt(B * B - 4 * A * K)) / (2 * A))
    return 180 - math.degrees(math.atan(w / p1) + math.atan(w / p2))
cl_star = brentq(lambda c: pm(c) - 60, 1e-12, 1e-9, xtol=1e-20, rtol=1e-12)
assert d["met"] is False and len(d["met_ranges"]) == 1, d["met_ranges"]
lo, hi = d["met_ranges"][0]
assert lo == 1e-12 and abs(hi / cl_star - 1) < 1e-5 and d["max_load_f"] == hi, (hi, cl_star)
PYEOF

# ---- load: the suggested size command ---------------------------------------
# An invented regulator: amplifier (amp), pass stage (out), divider; a small parasitic
# cgd across the pass stage and the compensation ccomp at the amplifier output. The
# suggestion repeats the user's --set, adds the worst load to the node's own 20 pF, and
# tunes the cap or res the compensation table ranks highest at that load.
cat >"$tmp/reg.loop" <<'LOOP'
param gma = 200u
node fb  r=100k c=0.5p
node amp r=1M   c=0.5p
node out r=2k   c=20p
gm ga  fb  -> amp gma
gm gp  amp -> out -20m
cap cgd   amp out 0.2p
cap ccomp amp gnd 20p
res rtop  out fb  100k
loop reg negative fb amp out
LOOP
for own in "" 30p; do
    extra=
    [ -n "$own" ] && extra="--set out.c=$own"
    "$LW" load "$tmp/reg.loop" --node out --cload 1n..100n --points 5 --set gma=150u --set 'rtop=2*50k' $extra --json >"$tmp/r.json" 2>/dev/null
    "$LW" load "$tmp/reg.loop" --node out --cload 1n..100n --points 5 --set gma=150u --set 'rtop=2*50k' $extra >"$tmp/r.txt" 2>/dev/null
    $PY - "$LW" "$tmp/reg.loop" "$tmp/r.json" "$tmp/r.txt" "${own:-20p}" <<'PYEOF' && ok || bad "load: the suggested size command (own c ${own:-20p})"
import json, shlex, subprocess, sys
lw, loop, d, text, own = sys.argv[1], sys.argv[2], json.load(open(sys.argv[3])), open(sys.argv[4]).read(), sys.argv[5]
worst = min(d["points"], key=lambda p: p["phase_margin_deg"])["value"]
line = [l for l in text.split("\n") if l.startswith("    loopwise size ")]
assert len(line) == 1, text
args = shlex.split(line[0])
# the user's --set values, quoted for the shell, and no second out.c
assert args[3:7] == ["--set", "gma=150u", "--set", "rtop=2*50k"], args
assert "'rtop=2*50k'" in line[0]
sets = [args[k + 1] for k in range(len(args)) if args[k] == "--set"]
assert [s for s in sets if s.startswith("out.c=")] == ["out.c=%s+%s" % (own, "%gn" % (worst * 1e9))], (sets, worst)
tune = args[args.index("--tune") + 1]
# the table at that load, from check: the cap or res with the largest gain either way
chk = subprocess.run([lw, "check", loop, "--json"] + sum((["--set", s] for s in sets), []),
                     capture_output=True, text=True)
table = json.loads(chk.stdout)["compensation_table"]
gain = lambda r: max(v for v in (r["pm_change_double_deg"], r["pm_change_half_deg"]) if v is not None)
best = max((r for r in table if r["kind"] != "node"), key=gain)
assert tune == best["name"] == "ccomp" and gain(best) > 0.05, (tune, best)
# and the suggestion runs
run = subprocess.run([lw] + args[1:], capture_output=True, text=True)
assert run.returncode in (0, 1) and run.stdout.startswith("loopwise size: "), run.stderr
PYEOF
done

# Where a sweep crosses the stability boundary: three identical inverting gm-RC stages
# in a ring, T(s) = A/(1 + s/p)^3, are stable exactly for A < 8 (Routh-Hurwitz on
# (1 + s/p)^3 + A: 3 * 3 > 1 + A, worked by hand); a sweep of A over 2..20 turns unstable
# between two points and says where, to 1e-7 (the stated bisection), in text and JSON.
cat >"$tmp/ring3a.loop" <<'EOF'
param A = 2
param gs = A^(1/3) / 10k
node n1 r=10k c=2p
node n2 r=10k c=2p
node n3 r=10k c=2p
gm g1 n3 -> n1 -gs
gm g2 n1 -> n2 -gs
gm g3 n2 -> n3 -gs
loop ring negative n1 n2 n3
EOF
"$LW" sweep "$tmp/ring3a.loop" --vary A --from 2 --to 20 --points 5 --json >"$tmp/edge.json" 2>/dev/null
$PY - "$tmp/edge.json" <<'PYEOF' && ok || bad "sweep: the stability boundary of a three-pole ring at A = 8"
import json, sys
d = json.load(open(sys.argv[1]))
e = d["stability_changes"]
assert len(e) == 1 and e[0]["becomes"] == "unstable", e
assert abs(e[0]["value"] / 8 - 1) < 2e-7, e
# A = 2 * 10^(k/4): 2, 3.56, 6.32, 11.2, 20
assert [p["stable"] for p in d["points"]] == [True, True, True, False, False], d["points"]
PYEOF
"$LW" sweep "$tmp/ring3a.loop" --vary A --from 2 --to 20 --points 5 --lin 2>/dev/null |
    grep -q "^The closed loop turns UNSTABLE as A grows through 8\.$" && ok ||
    bad "sweep: the text names the stability boundary (linear sweep)"

# Ranking without a crossover: one pole with net positive feedback, T = -A/(1 + s/p),
# has no crossover for A < 1 (|T| <= A), a gain margin -20 log10 A at DC, and is
# unstable for A > 1 (closed-loop pole at -p (1 - A); worked by hand). The worst corner
# is the smallest gain margin; a size that cannot reach its target never offers an
# unstable value as the best while a stable one exists.
cat >"$tmp/pf.loop" <<'EOF'
param A = 0.5  corners 0.5..0.9
node x r=10k c=1.6n
node y r=1k
gm gf y -> x A/10k
gm gb x -> y 1m
loop main positive x y
EOF
"$LW" corners "$tmp/pf.loop" 2>/dev/null | grep -q "^Worst corner #2: no crossover, phase margin undefined, gain margin 0.92 dB" &&
    ok || bad "corners: the worst of corners without a crossover is not the smallest gain margin"
"$LW" size "$tmp/pf.loop" --tune A --within 0.5..2 --gm 3 >"$tmp/o" 2>/dev/null
grep -q "TARGET NOT REACHABLE in the range: the best is A = 500m$" "$tmp/o" &&
    ! grep -q "UNSTABLE" "$tmp/o" && ok || bad "size: the best of an unreachable target is not the stable A = 0.5: $(grep best "$tmp/o")"

# A small gain margin is noted when no --gm is given: the ring at A = 7.8 has
# GM = 20 log10(8/7.8) = 0.22 dB (closed form as above), at A = 2 it has 12.04 dB
"$LW" check "$tmp/ring3a.loop" --set A=7.8 2>/dev/null | grep -q "^Note: the gain margin is only 0.22 dB (at " &&
    ok || bad "check: no note of a 0.22 dB gain margin"
"$LW" check "$tmp/ring3a.loop" --set A=2 2>/dev/null | grep -q "^Note: the gain margin is only" &&
    bad "check: a 12 dB gain margin noted as small" || ok
"$LW" check "$tmp/ring3a.loop" --set A=7.8 --gm 0.1 2>/dev/null | grep -q "^Note: the gain margin is only" &&
    bad "check: the small-gain-margin note beside a --gm target" || ok

# A crossing of the goal where the margin jumps (a crossover appearing at a resonance
# peak of Q 100 as the gain grows) is said to be one; a smooth one (the ring) is not
cat >"$tmp/tank.loop" <<'EOF'
param k = 2m
node e  r=200k c=120n
node u  r=2M   c=2p
node w  c=2p
gm  ge   w -> e  -k
gm  gin  e -> u  50u
gm  gb   u -> w  50u
gm  ga   w -> u  -50u
loop outer negative e u w
loop tank  negative u w
break ge
EOF
"$LW" sweep "$tmp/tank.loop" --vary k --from 1m --to 100m --points 6 --json 2>/dev/null |
    $PY -c "import json,sys; c=json.load(sys.stdin)['crossings']; assert len(c) == 1 and c[0]['jump'] is True, c" &&
    ok || bad "sweep: a jump of the margin across the goal is not flagged"
"$LW" sweep "$tmp/tank.loop" --vary k --from 1m --to 100m --points 6 2>/dev/null |
    grep -q "^The margin jumps down past the goal at k = 30 mS, from 90.00° to 0.00°: a crossover appears or vanishes" &&
    ok || bad "sweep: the text of a jump across the goal"
"$LW" sweep "$tmp/ring3a.loop" --vary A --from 1.2 --to 4 --points 5 --json 2>/dev/null |
    $PY -c "import json,sys; c=json.load(sys.stdin)['crossings']; assert len(c) == 1 and c[0]['jump'] is False, c" &&
    ok || bad "sweep: a smooth crossing of the goal is flagged as a jump"

echo "verdicts: $pass passed, $fail failed"
echo "$pass passed, $fail failed"
[ "$fail" = 0 ]
