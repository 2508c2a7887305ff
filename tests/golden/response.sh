#!/bin/sh
# Command-line tests of SPEC section 6: inputs change no figure of the loop,
# 'response' refuses every bad request with exit 2 and a message (nothing on
# stdout, no file written), an unstable loop exits 1 without a step
# response, and the outputs carry every field.
LW=${1:-./loopwise}
. tests/golden/lib.sh
REG=cases/regulator.loop
R=cases/refcore.loop

# ---- an input is AC ground: moving an element's end from gnd to an input,
# or adding a gm driven by an input, changes no figure of any command --------
moved() { # FILE NODE: the file with 'input vx' on top, every 'gnd' end of a
          # res or cap on vx, and (unless NODE is -) a gm from vx into NODE
    echo "input vx"
    sed -e '/^\(res\|cap\) /s/ gnd / vx /' "$1"
    [ "$2" = - ] || echo "gm gvx vx -> $2 1m"
}
same() { # WHAT CMD FILE...: the command's output on FILE and on its moved form
    what=$1 node=$2
    shift 2
    moved "$R" "$node" >"$tmp/moved.loop"
    "$LW" "$@" "$R" >"$tmp/a" 2>/dev/null
    ra=$?
    "$LW" "$@" "$tmp/moved.loop" >"$tmp/b" 2>/dev/null
    rb=$?
    # the compensation table names the input an element is tied to (below)
    sed -e "s|$tmp/moved.loop|$R|g" -e 's/\(cap\|res\) \([a-z0-9_]*\)-vx  /\1 \2-gnd /' \
        -e 's/"between": \["\([a-z0-9_]*\)", "vx"\]/"between": ["\1", "gnd"]/' "$tmp/b" >"$tmp/b2"
    if [ "$ra" = "$rb" ] && [ -s "$tmp/a" ] && cmp -s "$tmp/a" "$tmp/b2"; then ok
    else bad "$what: an input changed the output (exit $ra vs $rb)"; diff "$tmp/a" "$tmp/b2" | head -n 4; fi
}
grep -q '^cap ccomp ea  gnd' $R && ok || bad "refcore.loop no longer has a cap to gnd to move"
same "check --json" ea check --json
same "check (text)" - check
same "gain --csv" ea gain --csv -
same "sweep" ea sweep --vary rser --from 540 --to 54k --points 7 --json
same "size" ea size --tune ccomp --pm 45 --json
same "load" ea load --node vref --cload 1p..1n --points 5 --json
same "corners" ea corners --json
same "montecarlo" ea montecarlo --samples 200 --seed 3 --json
# the regulator's elements on vin were on gnd once: put them back, same figures
sed -e '/^input vin/d; /^gm  g_sup/d; /^\(res\|cap\) /s/ vin / gnd /' $REG >"$tmp/reg_gnd.loop"
"$LW" check $REG --json >"$tmp/a" 2>/dev/null
"$LW" check "$tmp/reg_gnd.loop" --json >"$tmp/b" 2>/dev/null
sed -e 's/"between": \["\([a-z0-9_]*\)", "vin"\]/"between": ["\1", "gnd"]/' "$tmp/a" >"$tmp/a2"
sed "s|$tmp/reg_gnd.loop|$REG|g" "$tmp/b" | cmp -s - "$tmp/a2" && ok ||
    bad "regulator: its supply elements on gnd give other figures"
# ... and the compensation table names the input, not gnd, at the end of an element tied
# to it (the file says 'cap cgs gate vin', 'res ro_ea gate vin', 'res ro_p out vin')
for e in cgs ro_ea ro_p; do
    end=$(awk -v e=$e '$2 == e { print $3 "-" $4 }' $REG)
    case $end in *-vin) ok ;; *) bad "$REG: $e is no longer tied to vin" ;; esac
    "$LW" check $REG | grep -Eq "^  $e +(cap|res) $end " && ok || bad "check: $e is not shown as $end"
    grep -q "\"name\": \"$e\", \"between\": \[\"${end%-vin}\", \"vin\"\]" "$tmp/a" && ok ||
        bad "check --json: $e is not between ${end%-vin} and vin"
done

# ---- bad requests: exit 2, a message, nothing on stdout, no file ------------
# refuse_nofile WANT ARGS...: as refuse, with --csv and -o given: neither written
refuse_nofile() {
    want=$1
    shift
    rm -f "$tmp/r.csv" "$tmp/r.png"
    refuse "$want" "$@" --csv "$tmp/r.csv"
    [ ! -e "$tmp/r.csv" ] && ok || bad "$*: a CSV was written"
}
refuse_nofile "--to gnd: ground does not move" response $REG --to gnd
refuse_nofile "--to vin: 'vin' is an input (a driven node); a response is read at a node" \
    response $REG --to vin
refuse_nofile "--to: unknown node 'outt' (did you mean 'out'?)" response $REG --to outt
refuse_nofile "--from out: 'out' is not an input; --from names an 'input' line" \
    response $REG --to out --from out
refuse_nofile "--from: unknown input 'vim' (did you mean 'vin'?)" response $REG --to out --from vim
refuse_nofile "--inject vin: 'vin' is an input (a driven node); use --from for an input" \
    response $REG --to out --inject vin
refuse_nofile "--inject gnd: ground does not move" response $REG --to out --inject gnd
refuse_nofile "--inject: unknown node 'gat' (did you mean 'gate'?)" response $REG --to out --inject gat
refuse_nofile "the file declares no input: add an 'input' line, or give a current with --inject NODE" \
    response cases/twostage.loop --to out
printf 'input va\ninput vb\n' >"$tmp/two.loop"
sed -e '/^input vin/d; s/ vin / va /; s/ vin$/ va/' $REG | sed -e 's/^res ro_ea  gate va /res ro_ea  gate vb /' >>"$tmp/two.loop"
refuse_nofile "the file has 2 inputs (va, vb): choose one with --from NAME" response "$tmp/two.loop" --to out
refuse "response needs --to NODE" response $REG
refuse "response --to names a node, not a number" response $REG --to 5
refuse "response --from names an input, not a number" response $REG --to out --from 1
refuse "--from INPUT and --inject NODE both name the source; give one" response $REG --to out --from vin --inject out
refuse "--step goes with 'response'" check $REG --step
refuse "--to NODE, --from INPUT and --inject go with 'response' or 'sweep'" gain $REG --to out
refuse "-o draws one response; with --inject each" response $REG --to out --inject each -o "$tmp/r.png"
[ ! -e "$tmp/r.png" ] && ok || bad "--inject each -o wrote a picture"
refuse "sweep takes one source: --inject NODE, not each" sweep $REG --vary esr --from 0.1 --to 1 --to out --inject each
refuse "sweep --from INPUT or --inject NODE needs --to NODE as well" sweep $REG --vary esr --from 0.1 --to 1 --inject out
refuse "--to NODE given twice" response $REG --to out --to fb
# an input is not a node, a param or an element for the other commands either
refuse "--node vin: 'vin' is an input, an ideal source: a load there changes nothing" \
    load $REG --node vin --cload 1p..1n
refuse "'vin.r': 'vin' is an input, an ideal source with no r or c" check $REG --set vin.r=1k
refuse "'vin' is an input, not a param or an element" sweep $REG --vary vin --from 1 --to 2
refuse "sweep --to NODE reads a response along one --vary, not over a map of two" sweep $REG \
    --vary esr --from 0.1 --to 1 --vary cout --from 1u --to 4u --to out

# ---- exit codes ------------------------------------------------------------
"$LW" response $REG --to out >"$tmp/o" 2>"$tmp/e"
[ $? = 0 ] && [ -s "$tmp/o" ] && ok || bad "response: stable loop must exit 0 ($(head -n 1 "$tmp/e"))"
"$LW" response $REG --to out --pm 70 >/dev/null 2>&1
[ $? = 1 ] && ok || bad "response: --pm 70 missed (62.7 deg) must exit 1"
# the regulator with 10 nF at its output instead of 2.2 uF: the closed-loop
# pair moves into the right half-plane (+173 kHz +- j1.68 MHz): unstable
"$LW" response $REG --to out --set cout=10n --step >"$tmp/o" 2>/dev/null
rc=$?
"$LW" check $REG --set cout=10n --json 2>/dev/null | $PY -c "import json,sys; sys.exit(0 if json.load(sys.stdin)['stable'] is False else 1)" &&
    [ $rc = 1 ] && grep -q "UNSTABLE" "$tmp/o" && ! grep -q "^Step response" "$tmp/o" && ok ||
    bad "response on an unstable loop: exit $rc, a sentence, no step"
# ... said before the figures and the table, and its right-half-plane poles marked in the
# pole list as check marks them (the pair above: one row)
"$LW" check $REG --set cout=10n --json >"$tmp/u_check.json" 2>/dev/null
$PY - "$tmp/o" "$tmp/u_check.json" <<'PYEOF' && ok || bad "response on an unstable loop: the sentence first, the poles marked"
import json, sys
text = open(sys.argv[1]).read().split("\n")
cl = json.load(open(sys.argv[2]))["closed_loop_poles"]
rhp = [p for p in cl if p["re_hz"] > 0 and p["im_hz"] >= 0]
assert len(rhp) == 1 and abs(rhp[0]["re_hz"] - 173e3) < 1e3, rhp
first = next(i for i, l in enumerate(text) if "UNSTABLE" in l)
assert first < text.index("Closed-loop poles (s/2\u03c0)") < next(i for i, l in enumerate(text) if l.startswith("  frequency"))
assert text[first].startswith("The closed loop is UNSTABLE: 2 poles lie in the right half-plane")  # the pair
poles = text[text.index("Closed-loop poles (s/2\u03c0)") + 1:text.index("Zeros of H (s/2\u03c0)")]
assert sum("RIGHT HALF-PLANE" in l for l in poles) == len(rhp), poles
assert "173 kHz" in [l for l in poles if "RIGHT HALF-PLANE" in l][0], poles
PYEOF
"$LW" response $REG --to out --set cout=10n --json >"$tmp/u.json" 2>/dev/null
$PY -c "import json,sys; d=json.load(open(sys.argv[1])); assert d['step'] is None and d['stable'] is False" "$tmp/u.json" &&
    ok || bad "response --json on an unstable loop: step must be null"

# ---- outputs ---------------------------------------------------------------
"$LW" response $REG --to out --json >"$tmp/r.json" 2>/dev/null
$PY - "$tmp/r.json" <<'PYEOF' && ok || bad "response JSON fields"
import json, sys
d = json.load(open(sys.argv[1]))
need = ["to", "from", "inject", "unit", "dc", "dc_db", "rejection_db", "hinf", "peak",
        "bandwidth_hz", "fmin_hz", "fmax_hz", "poles", "zeros", "stable", "points", "step"]
miss = [k for k in need if k not in d]
miss += [k for k in ("hz", "value", "db", "over_dc_db") if k not in d["peak"]]
miss += [k for k in ("initial", "final", "peak_value", "peak_time_s", "overshoot_pct",
                     "undershoot_pct", "rise_time_s", "settle_s", "slow_mode") if k not in d["step"]]
miss += [k for k in ("1", "0.1") if k not in d["step"]["settle_s"]]
miss += [k for k in ("re_hz", "im_hz", "amplitude", "time_constant_s", "doublet")
         if k not in d["step"]["slow_mode"]]
assert len(d["points"]) == 121 and all(set(p) == {"hz", "db", "phase_deg"} for p in d["points"])
assert d["from"] == "vin" and d["unit"] == "V/V"
if miss:
    print("missing:", miss)
    sys.exit(1)
PYEOF
"$LW" response $REG --to out --inject each --json >"$tmp/e.json" 2>/dev/null
$PY - "$tmp/e.json" <<'PYEOF' && ok || bad "response --inject each JSON"
import json, math, sys
d = json.load(open(sys.argv[1]))
assert set(d) >= {"to", "stable", "poles", "injections"}
inj = d["injections"]
assert sorted(i["node"] for i in inj) == ["cx", "fb", "gate", "out"], inj
for i in inj:
    assert set(i) == {"node", "final", "peak_value", "overshoot_pct", "undershoot_pct",
                      "settle_1pct_s"}
# sorted by overshoot (null last), then 1% settling time
key = [(i["overshoot_pct"] is None, i["overshoot_pct"] or 0, i["settle_1pct_s"]) for i in inj]
assert key == sorted(key), key
PYEOF
rm -f "$tmp/r.csv"
"$LW" response $REG --to out --csv "$tmp/r.csv" --points 30 >/dev/null 2>&1 &&
    [ "$(wc -l <"$tmp/r.csv")" = 31 ] && head -n 1 "$tmp/r.csv" | grep -q '^freq_hz,mag_db,phase_deg$' &&
    ok || bad "response --csv"
"$LW" response $REG --to out --inject each --csv - >"$tmp/e.csv" 2>/dev/null &&
    head -n 1 "$tmp/e.csv" | grep -q '^node,final,peak_value,overshoot_pct,undershoot_pct,settle_1pct_s$' &&
    [ "$(wc -l <"$tmp/e.csv")" = 5 ] && ok || bad "response --inject each --csv"
for args in "--to out" "--to out --step" "--to out --inject out --step"; do
    rm -f "$tmp/p.svg" "$tmp/p.png"
    "$LW" response $REG $args -o "$tmp/p.svg" >/dev/null 2>"$tmp/e" &&
        $PY -c "import sys, xml.etree.ElementTree as E; r=E.parse(sys.argv[1]).getroot(); assert r.tag.endswith('svg')" "$tmp/p.svg" &&
        ok || bad "response $args -o SVG: $(cat "$tmp/e")"
done
# the step picture marks what it says: final value, 1% band, peak, settling
"$LW" response $REG --to out --inject out --step -o "$tmp/s.png" --keep-script "$tmp/ks" >/dev/null 2>&1
grep -q "final value" "$tmp/ks/plot.gp" && grep -q "1% band" "$tmp/ks/plot.gp" &&
    grep -q "label 'peak" "$tmp/ks/plot.gp" && grep -q "within 1% from" "$tmp/ks/plot.gp" &&
    ok || bad "step picture marks"
# no nan or inf in any output
for args in "--to out" "--to out --step" "--to cx --inject cx --step" "--to out --inject each"; do
    "$LW" response $REG $args >"$tmp/t" 2>&1; "$LW" response $REG $args --json >>"$tmp/t" 2>&1
    grep -qiw "nan\|inf\|-inf" "$tmp/t" && bad "response $args: nan or inf in the output" || ok
done

# ---- sweep --to: the margin and its price at every point --------------------
# Over rout the damping of tests/golden/second_order.loop runs from zeta 0.2
# to 0.9 (zeta = 1/(2 wn rout c)); each point's overshoot must be the closed
# form exp(-pi zeta / sqrt(1 - zeta^2)) (textbook, from memory) and its peak
# 1/(2 zeta sqrt(1 - zeta^2)) below zeta = 1/sqrt(2), 0 dB above.
SO=tests/golden/second_order.loop
"$LW" sweep $SO --vary rout --from 44.3k --to 199k --points 6 --to out --json >"$tmp/sw.json" 2>"$tmp/e"
$PY - "$tmp/sw.json" <<'PYEOF' && ok || bad "sweep --to: overshoot and peak per point $(head -n 1 "$tmp/e")"
import json, math, sys
d = json.load(open(sys.argv[1]))
wn, c = 2 * math.pi * 2e6, 1e-12
for p in d["points"]:
    z = 1 / (2 * wn * p["value"] * c)
    assert 0.19 < z < 0.95, z
    os_ = 100 * math.exp(-math.pi * z / math.sqrt(1 - z * z))
    assert abs(p["overshoot_pct"] - os_) < 1e-7 * os_, (z, p["overshoot_pct"], os_)
    mp = 20 * math.log10(1 / (2 * z * math.sqrt(1 - z * z))) if z < 2 ** -0.5 else 0.0
    assert abs(p["peak_db"] - mp) < 1e-7, (z, p["peak_db"], mp)
    assert p["settle_1pct_s"] > 0
PYEOF
"$LW" sweep $SO --vary rout --from 44.3k --to 199k --points 4 --to out --csv - >"$tmp/sw.csv" 2>/dev/null
head -n 1 "$tmp/sw.csv" | grep -q ',stable,overshoot_pct,settle_1pct_s,peak_db$' &&
    [ "$(wc -l <"$tmp/sw.csv")" = 5 ] && ok || bad "sweep --to --csv columns"
"$LW" sweep $SO --vary rout --from 44.3k --to 199k --points 4 --to out >"$tmp/o" 2>/dev/null
grep -q "overshoot   settles 1%  peak |H|" "$tmp/o" && ok || bad "sweep --to: the text table's columns"

# --fmin/--fmax bound the peak of sweep --to as they bound response's: with --fmax 1 MHz
# below the resonance wn sqrt(1 - 2 zeta^2) (zeta 0.2 to 0.6 here: 1.13 to 1.92 MHz),
# |H| still rises at the top of the band, so the peak is |H(j 2 pi 1 MHz)| =
# 1 / |1 - u^2 + 2 j zeta u|, u = 1 MHz / 2 MHz (closed form of the second-order loop).
"$LW" sweep $SO --vary rout --from 66.3k --to 199k --points 4 --to out --fmax 1M --json >"$tmp/swf.json" 2>"$tmp/e"
$PY - "$tmp/swf.json" <<'PYEOF' && ok || bad "sweep --to: --fmax bounds the peak $(head -n 1 "$tmp/e")"
import json, math, sys
d = json.load(open(sys.argv[1]))
wn, c, u = 2 * math.pi * 2e6, 1e-12, 0.5
for p in d["points"]:
    z = 1 / (2 * wn * p["value"] * c)
    assert 0.19 < z < 0.61, z
    want = -20 * math.log10(abs(complex(1 - u * u, 2 * z * u)))
    assert abs(p["peak_db"] - want) < 1e-6, (z, p["peak_db"], want)
PYEOF
# ... and each point's peak is what response gives with the same band
"$LW" response $SO --to out --set rout=66.3k --fmax 1M --json >"$tmp/rf.json" 2>/dev/null
$PY -c "import json,sys; a=json.load(open(sys.argv[1]))['points'][0]['peak_db']; b=json.load(open(sys.argv[2]))['peak']['db']; assert abs(a-b) < 1e-9, (a, b)" "$tmp/swf.json" "$tmp/rf.json" &&
    ok || bad "sweep --to --fmax and response --fmax disagree on the peak"

# A peak only approached as f grows without bound (a capacitive path from the supply to
# the output): the text says the worst value in the band needs --fmax, and gives the
# largest hump at a finite frequency; the reference checks both against its own |H|.
(cat $REG; echo "cap cft out vin 2p"; echo "#% response --to out --from vin") >"$tmp/regft.loop"
LOOPWISE=$LW $PY tests/ref/response_ref.py "$tmp/regft.loop" >"$tmp/rr" 2>&1 && ok ||
    bad "the supply's feedthrough against the reference: $(grep -v '^PASS' "$tmp/rr" | head -n 3)"
"$LW" response "$tmp/regft.loop" --to out --json >"$tmp/ft.json" 2>/dev/null
"$LW" response "$tmp/regft.loop" --to out >"$tmp/ft.txt" 2>/dev/null
$PY - "$tmp/ft.json" "$tmp/ft.txt" <<'PYEOF' && ok || bad "response: a peak at infinity and the local peak in the text"
import json, sys
d, text = json.load(open(sys.argv[1])), open(sys.argv[2]).read()
# at infinity the caps are shorts: cft (2p) against the output's own 10p, H = 2/12
assert d["peak"]["hz"] is None and abs(d["peak"]["value"] - 2 / 12) < 1e-9, d["peak"]
lp = d["local_peak"]
assert lp is not None and lp["value"] < d["peak"]["value"], lp
assert ("  peak           -15.56 dB (0.1667 V/V), approached as f grows without bound: the "
        "largest |H| in your band\n                 depends on where it ends; give --fmax for it\n") in text
line = [l for l in text.split("\n") if l.startswith("  local peak     ")]
assert line == ["  local peak     %.2f dB (%.4g V/V) at %.3g kHz, the largest hump of |H| at a "
                "finite frequency" % (lp["db"], lp["value"], lp["hz"] / 1e3)], (line, lp)
PYEOF
# with --fmax above the hump (and below where |H| climbs past it), the peak is the hump
"$LW" response "$tmp/regft.loop" --to out --fmax 2M --json >"$tmp/ft2.json" 2>/dev/null
$PY -c "import json,sys; a=json.load(open(sys.argv[1])); b=json.load(open(sys.argv[2])); assert abs(b['peak']['hz']/a['local_peak']['hz']-1) < 1e-6 and abs(b['peak']['value']/a['local_peak']['value']-1) < 1e-9, (a['local_peak'], b['peak'])" "$tmp/ft.json" "$tmp/ft2.json" &&
    ok || bad "response --fmax: the peak in the band is the local peak"

echo "response: $pass passed, $fail failed"
[ "$fail" = 0 ]
