#!/bin/sh
# Command-line tests of issue 17: the single exit-code rule of SPEC section 5
# for every command, and the faults a new user hit (each test here failed
# before its fix). Expected exit codes follow from closed forms of the ring
# in tests/golden/ring3.loop: three equal poles and loop gain a^3, stable
# while a^3 < 8 (Routh-Hurwitz on (1 + s/p)^3 + a^3, from memory); at
# a = 1.5 the phase margin is 35.4 degrees and the gain margin 7.50 dB.
LW=${1:-./loopwise}
. tests/golden/lib.sh
G=tests/golden
RING=$G/ring3.loop
R=cases/refcore.loop

# exits WANT WHAT CMD...: CMD exits with WANT (0 or 1) and prints something.
exits() {
    want=$1 what=$2
    shift 2
    "$LW" "$@" >"$tmp/o" 2>"$tmp/e"
    rc=$?
    if [ "$rc" = "$want" ] && [ -s "$tmp/o" ]; then ok
    else bad "$what: exit $rc, expected $want ($*): $(head -n 1 "$tmp/e")"; fi
}

# ---- the rule, command by command ------------------------------------------
# No target on the command line: the default 60 degrees is only a reference,
# so a stable loop below it exits 0; an unstable one exits 1 (a = 2.5:
# 2.5^3 = 15.6 > 8).
for c in check gain; do
    exits 0 "$c: stable, 35.4 deg below the 60 deg reference, no target" $c $RING
    exits 1 "$c: unstable loop" $c $RING --set a=2.5
    exits 0 "$c: --pm 30 met (35.4 deg)" $c $RING --pm 30
    exits 1 "$c: --pm 40 missed (35.4 deg)" $c $RING --pm 40
    exits 0 "$c: --gm 7 met (7.50 dB)" $c $RING --gm 7
    exits 1 "$c: --gm 8 missed (7.50 dB)" $c $RING --gm 8
done
exits 0 "roots: stable, no target" roots $RING -o "$tmp/r.png"
exits 1 "roots: unstable loop" roots $RING --set a=2.5 -o "$tmp/r.png"
exits 1 "roots: --pm 40 missed" roots $RING --pm 40 -o "$tmp/r.png"
exits 0 "polar: stable, no target" polar $RING -o "$tmp/p.png"
exits 1 "polar: unstable loop" polar $RING --set a=2.5 -o "$tmp/p.png"
exits 1 "polar: --pm 40 missed" polar $RING --pm 40 -o "$tmp/p.png"
exits 0 "polar: --gm 7 met (7.50 dB)" polar $RING --gm 7 -o "$tmp/p.png"

# sweep: a from 1.2 to 1.5 stays stable (1.5^3 < 8), margins 79.4 down to
# 35.4 deg; up to 2.5 it passes a = 2, where the ring becomes unstable.
exits 0 "sweep: stable range, below the reference, no target" sweep $RING --vary a --from 1.2 --to 1.5 --points 5
exits 1 "sweep: a point is unstable, no target" sweep $RING --vary a --from 1.2 --to 2.5 --points 5
exits 0 "sweep: --pm 30 met at every point" sweep $RING --vary a --from 1.2 --to 1.5 --points 5 --pm 30
exits 1 "sweep: --pm 40 missed at a = 1.5" sweep $RING --vary a --from 1.2 --to 1.5 --points 5 --pm 40

# load: 1 to 2 fF on a 1 pF node of the ring barely moves its poles.
exits 0 "load inside: stable, no target" load $RING --node n2 --cload 1f..2f --points 3
exits 1 "load inside: unstable ring (a = 2.5)" load $RING --node n2 --cload 1f..2f --points 3 --set a=2.5
exits 1 "load inside: --pm 40 missed" load $RING --node n2 --cload 1f..2f --points 3 --pm 40
exits 0 "load outside: stable ring, no target" load $RING --node tap --cload 1p..1n
exits 1 "load outside: the ring is unstable at every load" load $RING --node tap --cload 1p..1n --set a=2.5

# corners of a in 1.4..1.6: every corner stable (1.6^3 = 4.1 < 8), margins
# below 60; 2.2 (10.6 > 8) is not.
exits 0 "corners: stable, below the reference, no target" corners $RING
exits 1 "corners: --pm 40 missed" corners $RING --pm 40
# g3 = -3m makes the third stage's gain 30: a^2 30 >= 1.4^2 30 = 59 > 8
exits 1 "corners: an unstable corner" corners $RING --set g3=-3m
"$LW" corners $RING --set a=2.2 >/dev/null 2>"$tmp/e"
[ $? = 2 ] && grep -q "every param with a corner range is pinned" "$tmp/e" && ok ||
    bad "corners with its only ranged param pinned: $(cat "$tmp/e")"

# size: the margin falls as a grows: 60 deg needs 3 atan(w) = 120 deg at the
# crossover, w = tan 40 deg, a^2 = 1 + w^2, a = 1/cos 40 deg = 1.305; so
# a >= 1.4 never reaches 60 deg.
exits 0 "size: reachable" size $RING --tune a
exits 1 "size: unreachable in 1.4..3" size $RING --tune a --within 1.4..3

# montecarlo: only --yield decides. With 200 samples that all pass, the
# one-sided 95% lower bound is 0.05^(1/200) = 98.5% (Clopper-Pearson with
# x = n, from memory): it shows 90% but not 99%.
exits 0 "montecarlo: every sample below the reference, no --yield" montecarlo $RING --samples 200 --seed 1
exits 0 "montecarlo: --yield 90% shown" montecarlo $RING --samples 200 --seed 1 --pm 30 --yield 90%
exits 1 "montecarlo: --yield 99% needs 299 samples" montecarlo $RING --samples 200 --seed 1 --pm 30 --yield 0.99
grep -q "takes at least 299" "$tmp/o" && ok || bad "montecarlo: the samples a 99% yield needs"
exits 1 "montecarlo: --yield missed when no sample passes" montecarlo $RING --samples 50 --seed 1 --yield 50%
refuse "--yield takes a fraction between 0 and 1" montecarlo $RING --samples 10 --yield 99
refuse "--yield takes a fraction between 0 and 1" montecarlo $RING --samples 10 --yield 100%
refuse "--yield goes with 'montecarlo'" check $RING --yield 0.9

# ---- fault 1: an unbounded gain margin meets any --gm ----------------------
# A Miller amplifier with a nulling resistor: the phase never reaches -180.
"$LW" size $G/nulling.loop --tune cc --json >"$tmp/a.json" 2>/dev/null
"$LW" size $G/nulling.loop --tune cc --gm 10 --json >"$tmp/b.json" 2>/dev/null
rc=$?
$PY - "$tmp/a.json" "$tmp/b.json" <<'PYEOF' && [ "$rc" = 0 ] && ok || bad "size --gm with an unbounded gain margin (exit $rc)"
import json, sys
a, b = (json.load(open(p)) for p in sys.argv[1:])
# the gain margin is undefined at the answer, so --gm cannot move it
assert a["met"] and b["met"] and a["gain_margin_db"] is None, (a, b)
assert a["value"] == b["value"], (a["value"], b["value"])
PYEOF
exits 0 "check --gm 100 with an unbounded gain margin" check $G/nulling.loop --gm 100

# ---- fault 2: the reproduce line keeps the user's --set values --------------
"$LW" montecarlo $R --samples 300 --seed 3 --set ccomp=20p --set 'rser=2*2.7k' --json >"$tmp/mc.json" 2>/dev/null
"$LW" corners $R --set ccomp=20p --json >"$tmp/c.json" 2>/dev/null
$PY - "$LW" "$tmp/mc.json" "$tmp/c.json" <<'PYEOF' && ok || bad "reproduce lines with --set"
import json, shlex, subprocess, sys
mc, c = json.load(open(sys.argv[2])), json.load(open(sys.argv[3]))
for want, line in ((mc["worst"]["phase_margin_deg"], mc["worst"]["reproduce"]),
                   (c["corners"][0]["phase_margin_deg"], c["reproduce"])):
    assert "--set ccomp=20p" in line, line
    out = subprocess.run([sys.argv[1]] + shlex.split(line)[1:] + ["--json"],
                         capture_output=True, text=True)
    got = json.loads(out.stdout)["phase_margin_deg"]
    assert abs(got - want) < 1e-9, (line, got, want)
assert "'rser=2*2.7k'" in mc["worst"]["reproduce"]   # quoted for the shell
PYEOF

# ---- fault 3: --set pins a param that carries a corner range ----------------
"$LW" corners $R --set temp=300 --json >"$tmp/p.json" 2>/dev/null
$PY - "$tmp/p.json" <<'PYEOF' && ok || bad "corners --set on a ranged param"
import json, sys
d = json.load(open(sys.argv[1]))
# refcore has three ranged params; temp pinned leaves 2^2 corners
assert len(d["corners"]) == 4 and d["pinned"] == ["temp"], d
assert all("temp" not in c["values"] for c in d["corners"])
assert "--set temp=300" in d["reproduce"]
PYEOF
"$LW" corners $R --set temp=300 >"$tmp/o" 2>/dev/null
grep -q "pinned by --set, not combined: temp = 300" "$tmp/o" && ok || bad "corners: pinned params in the header"
"$LW" montecarlo $R --samples 20 --seed 1 --set ib=10u >"$tmp/o" 2>/dev/null
grep -q "pinned by --set, not drawn: ib = 10" "$tmp/o" && ! grep -q "varied:.* ib " "$tmp/o" && ok ||
    bad "montecarlo: a pinned param is drawn"
# temp has a corner range and no distribution: Monte Carlo holds it, and says so
"$LW" montecarlo $R --samples 20 --seed 1 >"$tmp/o" 2>/dev/null
grep -q "^  held at their nominal value (a corner range, no distribution): temp = 300$" "$tmp/o" &&
    ! grep -q "varied:.* temp " "$tmp/o" && ok || bad "montecarlo: a param with only a corner range is not said to be held"
"$LW" size $R --tune ccomp --over montecarlo --samples 200 --seed 1 --yield 0.9 >"$tmp/o" 2>/dev/null
grep -q "^  held at their nominal value (a corner range, no distribution): temp = 300$" "$tmp/o" && ok ||
    bad "size --over montecarlo: a param with only a corner range is not said to be held"

# ---- fault 5: load ------------------------------------------------------------
# The points are spaced in the added load: SPEC section 4's log spacing
# v_i = A (B/A)^(i/(N-1)) from 1 pF to 20 pF, whatever the node's own 4 pF.
"$LW" load cases/twostage.loop --node out --cload 1p..20p --points 5 --json >"$tmp/l.json" 2>/dev/null
$PY - "$tmp/l.json" <<'PYEOF' && ok || bad "load spacing in the added load"
import json, sys
d = json.load(open(sys.argv[1]))
want = [1e-12 * 20 ** (i / 4) for i in range(5)]
got = [p["value"] for p in d["points"]]
assert all(abs(g - w) <= 1e-9 * w for g, w in zip(got, want)), got
PYEOF
"$LW" load cases/twostage.loop --node out --cload 1p..20p --points 5 >"$tmp/o" 2>/dev/null
! grep -q "matched copy" "$tmp/o" && grep -q "loopwise size cases/twostage.loop --set out.c=4p+20p --tune cc$" "$tmp/o" &&
    ok || bad "load: the remedy for an amplifier's own output"
# ... and with a target given, the suggested command sizes for that target, and what it
# finds meets it (its own exit code 0)
"$LW" load cases/twostage.loop --node out --cload 1p..20p --points 5 --pm 80 --gm 12 >"$tmp/o" 2>/dev/null
cmdline=$(sed -n 's/^    loopwise size \(.*\)$/\1/p' "$tmp/o")
[ "$cmdline" = "cases/twostage.loop --set out.c=4p+20p --tune cc --pm 80 --gm 12" ] &&
    ok || bad "load: the suggested size command drops the target: $cmdline"
# shellcheck disable=SC2086
"$LW" size $cmdline --json >"$tmp/s.json" 2>/dev/null && $PY -c "import json,sys; d=json.load(open(sys.argv[1])); assert d['met'] and abs(d['phase_margin_deg'] - 80) < 1e-6 and d['gain_margin_db'] >= 12, d" "$tmp/s.json" &&
    ok || bad "load: the suggested size command does not size for --pm 80"
"$LW" load $R --node brb --cload 0.1p..10p --points 5 >"$tmp/o" 2>/dev/null
grep -q "matched copy of 'g_srcb' outside the loop, as 'g_srco' already does for 'vref'" "$tmp/o" &&
    ok || bad "load: the remedy for a mirrored branch"

rm -f "$tmp/out.png"
exits 0 "load -o on a node outside the loop" load $R --node vref --cload 1p..1n -o "$tmp/out.png" --pm 30
[ -s "$tmp/out.png" ] && ok || bad "load -o outside the loop wrote no picture"

# ---- the pictures (their gnuplot scripts, kept with --keep-script) ----------
# gain: the margins are drawn as measured distances and said in words, with
# the values of ring3.loop's closed forms (35.4 deg, 7.50 dB); no dotted
# vertical line marks the crossover.
"$LW" gain $RING -o "$tmp/g.png" --keep-script "$tmp/kg" >/dev/null 2>&1
grep -q 'phase margin 35.4' "$tmp/kg/plot.gp" && grep -q 'gain margin 7.5 dB' "$tmp/kg/plot.gp" &&
    [ "$(grep -c 'heads size' "$tmp/kg/plot.gp")" = 2 ] &&
    ! grep -q 'set arrow from [-0-9.e+]*, graph 0 to' "$tmp/kg/plot.gp" &&
    ok || bad "gain picture: margins as measured distances in words"
# one symbol per meaning: the Miller zero of twostage.loop, gm2/(2 pi Cc) =
# 1.8m/(2 pi 1.2p) = 238.7 MHz in the right half-plane (closed form, from
# memory), is the right-half-plane symbol in both pictures.
"$LW" gain cases/twostage.loop -o "$tmp/g2.png" --keep-script "$tmp/kz" >/dev/null 2>&1
"$LW" roots cases/twostage.loop -o "$tmp/r2.png" --keep-script "$tmp/kr" >/dev/null 2>&1
$PY - "$tmp/kz" "$tmp/kr" <<'PYEOF' && ok || bad "a right-half-plane zero has one symbol everywhere"
import math, re, sys
strip = [l.split() for l in open(sys.argv[1] + "/strip.dat") if not l.startswith("#")]
rhp = [float(r[0]) for r in strip if r[2] == "2"]
assert len(rhp) == 1 and abs(rhp[0] - 1.8e-3 / (2 * math.pi * 1.2e-12)) < 1e-6 * rhp[0], rhp
roots = [l.split() for l in open(sys.argv[2] + "/roots.dat") if not l.startswith("#")]
assert sum(r[2] == "2" for r in roots) == 1 and not any(r[2] == "1" for r in roots), roots
for d in sys.argv[1:]:
    gp = open(d + "/plot.gp").read()
    # the right-half-plane zeros (kind 2) are drawn with point type 8, and only they
    assert re.search(r"\$3==2 \? \$2 : 1/0\) with points pt 8 ", gp), d
    assert gp.count("pt 8 ") == gp.count("$3==2") + ("1/0 with points pt 8" in gp), d
PYEOF
# roots: the ring's roots in closed form, p = 1/(10k 1p): the open-loop poles
# all at -p (the tap's too), the closed-loop poles of (1 + s/p)^3 + a^3 = 0 at
# -p(1 + a) and p(-1 + a e^(+-j pi/3)) (and the tap's -p), a pair of Q = |s|/(2|re s|) = 2.65 for
# a = 1.5. Drawn at log10(|s|/2pi/f0) e^(j arg s) with f0 half a decade below
# the smallest root; the frame holds them with under a decade of room, the
# right half-plane (empty) as a strip; the rays of constant Q at
# 180 - acos(1/(2Q)) degrees.
rm -rf "$tmp/kq"
"$LW" roots $RING -o "$tmp/q.png" --keep-script "$tmp/kq" >/dev/null 2>&1
$PY - "$tmp/kq" <<'PYEOF' && ok || bad "roots picture of the ring against its closed forms"
import cmath, math, re, sys
d, a = sys.argv[1], 1.5
p = 1 / (10e3 * 1e-12)
f0 = p / (2 * math.pi) / 10 ** 0.5
at = lambda s: math.log10(abs(s) / (2 * math.pi) / f0) * cmath.exp(1j * cmath.phase(s))
rows = [l.split() for l in open(d + "/roots.dat") if l.strip() and not l.startswith("#")]
rows = [(float(r[0]), float(r[1]), int(r[2])) for r in rows if r[2] != "9"]
want = [(-p + 0j, 0)] * 4 + [(-p + 0j, 3), (-p * (1 + a) + 0j, 3),
                              (p * (-1 + a * cmath.exp(1j * math.pi / 3)), 3)]  # -p: the tap
assert len(rows) == len(want), rows      # the lower member of the pair is not drawn
for s, kind in want:
    w = at(s)
    assert any(k == kind and abs(complex(x, y) - w) < 1e-6 for x, y, k in rows), (s, kind, rows)
gp = open(d + "/plot.gp").read()
x0, x1 = map(float, re.search(r"set xrange \[(\S+):(\S+)\]", gp).groups())
y0, y1 = map(float, re.search(r"set yrange \[(\S+):(\S+)\]", gp).groups())
xs, ys = [r[0] for r in rows], [r[1] for r in rows]
assert x0 < min(xs) and max(xs) < 0 < x1 <= 0.1 * (x1 - x0), (x0, x1, xs)
assert y0 < 0 <= min(ys) and max(ys) < y1, (y0, y1, ys)
assert min(xs) - x0 < 1 and x1 < 0.5, (x0, x1)  # under a decade of room; a strip of the right side
assert "right half-plane: empty" in gp and "Q 2.65" in gp, "labels"
grid = open(d + "/grid.dat").read().split("\n\n")
rays = [[tuple(map(float, l.split()[:2])) for l in g.strip().split("\n")] for g in grid
        if g.strip() and g.strip().split("\n")[-1].endswith(" 1")]
angles = sorted(round(math.degrees(math.atan2(r[-1][1], r[-1][0])), 4) for r in rays)
expect = sorted(round(180 - math.degrees(math.acos(1 / (2 * q))), 4) for q in (0.707, 1, 2, 5))
assert angles == expect, (angles, expect)
PYEOF
# the numbers on the plot are check's: four poles, the key names their nodes
grep -q '"1" at screen' "$tmp/kq/plot.gp" && grep -q '"4" at screen' "$tmp/kq/plot.gp" &&
    grep -q "'tap' at screen" "$tmp/kq/plot.gp" && ! grep -q '"5" at screen' "$tmp/kq/plot.gp" &&
    ok || bad "roots: the key of the numbered poles"

# polar: the drawn points are T(j2 pi f) = a^3/(1 + jf/fp)^3 of the ring (closed
# form, fp = 1/(2 pi 10k 1p)) on the radius |T| up to 1, 1 + 20 log10|T|/40 beyond;
# the crossover on the unit circle at fp sqrt(a^2 - 1), the phase crossing at
# fp tan 60 deg where T = -a^3/8, and the Nyquist count of SPEC section 7 on it:
# none for a = 1.5, two clockwise turns for a = 2.5 (Routh-Hurwitz: a^3 > 8).
for a in 1.5 2.5; do
    rm -rf "$tmp/kp"
    "$LW" polar $RING --set a=$a -o "$tmp/p.png" --keep-script "$tmp/kp" >/dev/null 2>&1
    $PY - "$tmp/kp" $a <<'PYEOF' && ok || bad "polar picture of the ring, a = $a"
import cmath, math, sys
d, a = sys.argv[1], float(sys.argv[2])
fp = 1 / (2 * math.pi * 10e3 * 1e-12)
T = lambda f: a ** 3 / (1 + 1j * f / fp) ** 3
rho = lambda m: m if m <= 1 else 1 + 20 * math.log10(m) / 40
rows = [l.split() for l in open(d + "/polar.dat") if l.strip() and not l.startswith("#")]
assert len(rows) > 100, len(rows)
for f, re_, im, x, y in (map(float, r) for r in rows):
    t = T(f)
    assert abs(complex(re_, im) - t) <= 1e-8 * abs(t), (f, re_, im, t)
    p = rho(abs(t)) * cmath.exp(1j * cmath.phase(t))
    assert abs(complex(x, y) - p) <= 1e-8 * max(abs(p), 1e-3), (f, x, y, p)
fs = [float(r[0]) for r in rows]
assert fs == sorted(fs) and fs[0] < fp / 100 and fs[-1] > fp * 100
marks = [l.split() for l in open(d + "/marks.dat") if not l.startswith("#")]
cross = [m for m in marks if m[2] == "0"]
phase = [m for m in marks if m[2] == "1"]
assert len(cross) == 1 and len(phase) == 1 and ["-1", "0", "2"] in [m[:3] for m in marks], marks
fc, f180 = fp * math.sqrt(a * a - 1), fp * math.sqrt(3)
assert abs(float(cross[0][3]) - fc) < 1e-6 * fc and abs(float(phase[0][3]) - f180) < 1e-6 * f180
pc = cmath.exp(1j * cmath.phase(T(fc)))   # on the unit circle
assert abs(complex(float(cross[0][0]), float(cross[0][1])) - pc) < 1e-6
assert abs(float(phase[0][0]) + rho(a ** 3 / 8)) < 1e-6 and abs(float(phase[0][1])) < 1e-6
gp = open(d + "/plot.gp").read()
want = ["N = 0 clockwise encirclements of -1", "Z = N + P = 0 closed-loop poles there", "stable"] \
    if a < 2 else ["N = 2 clockwise encirclements of -1", "Z = N + P = 2 closed-loop poles there",
                   "UNSTABLE"]
want += ["P = 0 poles of T in the right half-plane", "1 + dB/40", "|T| = 1 at %.3g MHz" % (fc / 1e6)]
missing = [w for w in want if w not in gp]
assert not missing, missing
PYEOF
done

# sweep: the goal line inside the frame, unstable points shaded, the
# smallest margin marked, more than three tick labels over two decades.
"$LW" sweep $R --vary rser --from 540 --to 54k -o "$tmp/s.png" --keep-script "$tmp/ks" >/dev/null 2>&1
"$LW" load $R --node brb --cload 0.1p..10p -o "$tmp/l.png" --keep-script "$tmp/kl" >/dev/null 2>&1
$PY - "$tmp/ks/plot.gp" "$tmp/kl/plot.gp" <<'PYEOF' && ok || bad "margin pictures"
import re, sys
for p in sys.argv[1:]:
    gp = open(p).read()
    lo, hi = map(float, re.search(r"set yrange \[([-0-9.e]+):([-0-9.e]+)\]", gp).groups())
    assert lo + 5 <= 60 <= hi - 5, (p, lo, hi)         # the 60-degree line clear of the frame
    assert "set object rect" in gp and "title 'unstable'" in gp, p
    assert "smallest margin" in gp and "pt 12" in gp, p
    tics = re.search(r"set xtics \((.*)\)", gp).group(1)
    assert tics.count("'") // 2 >= 5, (p, tics)
sweep = open(sys.argv[1]).read()
assert "falls through 60" in sweep and "offset 1,1.3" in sweep  # above the line, right of the mark
PYEOF
# montecarlo: the operating point (the --set values) and the yield on the picture
"$LW" montecarlo $R --samples 300 --seed 1 --set ccomp=25p --pm 55 --yield 90% -o "$tmp/h.png" --keep-script "$tmp/kh" >/dev/null 2>&1
grep -q "operating point 6[0-9.]*" "$tmp/kh/plot.gp" && grep -q -- "--set ccomp=25p" "$tmp/kh/plot.gp" &&
    grep -q "yield 100.00%: 300 of 300 samples pass" "$tmp/kh/plot.gp" &&
    grep -q "yield target 90%: met" "$tmp/kh/plot.gp" && ok || bad "montecarlo picture: operating point and yield"

# ---- fault 8: a param's unit comes from the fields it feeds ------------------
"$LW" size $G/nulling.loop --tune cm >"$tmp/o" 2>/dev/null
grep -q "answer          cm = [0-9.]* [fpn]F$" "$tmp/o" && ok || bad "size: a param feeding a cap prints in F: $(grep answer "$tmp/o")"
"$LW" sweep $G/nulling.loop --vary g2 --from 1m --to 3m --points 3 >"$tmp/o" 2>/dev/null
grep -q "^  3 mS " "$tmp/o" && ok || bad "sweep: a param feeding a gm prints in S"
"$LW" sweep $G/nulling.loop --vary k --from 1 --to 3 --points 3 >"$tmp/o" 2>/dev/null
grep -q "^  3  *[0-9]" "$tmp/o" && ok || bad "sweep: a param inside a product prints without a unit"

# the margin picture's value axis in the units of the table: k has none, so its ticks
# carry the SI prefix glued on as the table's rows do ('500m', the file's own way of
# writing the number; '500 m' would read as metres), and its label is the name alone
"$LW" sweep $G/nulling.loop --vary k --from 0.5 --to 3 --points 5 -o "$tmp/k.png" --keep-script "$tmp/kk" >"$tmp/o" 2>/dev/null
grep -q "^  500m  " "$tmp/o" && grep -q "^set xtics ('500m' 0.5, '700m' 0.7, '1' 1, " "$tmp/kk/plot.gp" &&
    grep -q "^set xlabel 'k' noenhanced" "$tmp/kk/plot.gp" && ok || bad "sweep -o: the value axis is not in the table's units"

echo "rules: $pass passed, $fail failed"
echo "$pass passed, $fail failed"
[ "$fail" = 0 ]
