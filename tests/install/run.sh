#!/bin/sh
# make install into a scratch DESTDIR (issue 13), as a packager runs it:
# exactly the files it should put there; the manual pages render; the
# installed library exports only the entry points of loopwise.h, which
# compiles as C and as C++; examples/loop_report.c builds against the
# installed header, library and loopwise.pc through pkg-config alone, and
# its numbers equal, to the last digit, those the program prints as JSON
# for the same description and overrides (check, one sweep point, a
# response); make uninstall removes every file it installed and nothing
# else.
MAKE=${1:-make}
CC=${2:-cc}
LW=./loopwise
. tests/golden/lib.sh

D=$tmp/stage
P=/opt/loopwise-test
mkdir -p "$D$P/bin" && echo keep >"$D$P/bin/other-tool"   # not ours: must survive
$MAKE --no-print-directory install DESTDIR="$D" PREFIX="$P" >"$tmp/log" 2>&1 && ok ||
    { bad "make install"; cat "$tmp/log"; }

got=$(cd "$D" && find . -type f | sed 's|^\.||' | grep -v /other-tool | sort)
want=$(printf '%s\n' "$P/bin/loopwise" "$P/include/loopwise/loopwise.h" "$P/lib/libloopwise.a" \
    "$P/lib/pkgconfig/loopwise.pc" "$P/share/bash-completion/completions/loopwise" \
    "$P/share/man/man1/loopwise.1" "$P/share/man/man5/loopwise.5" | sort)
[ "$got" = "$want" ] && ok || bad "installed files: got
$got"
[ -x "$D$P/bin/loopwise" ] && "$D$P/bin/loopwise" --version | grep -q '^loopwise ' && ok ||
    bad "the installed program does not run"
cmp -s completion/loopwise.bash "$D$P/share/bash-completion/completions/loopwise" && ok ||
    bad "the completion script installed differs"

# The manual renders without a warning, and loopwise(1) names every option
# of every command (the commands and options read from the program's table).
for p in man1/loopwise.1 man5/loopwise.5; do
    out=$(MANWIDTH=80 man -l "$D$P/share/man/$p" 2>&1 >"$tmp/page")
    [ -z "$out" ] && [ -s "$tmp/page" ] && ok || bad "man -l $p: $out"
done
MANWIDTH=80 man -l "$D$P/share/man/man1/loopwise.1" 2>/dev/null >"$tmp/page1"
for c in $("$LW" --complete "loopwise " | grep -v -e '^help$' -e '^-'); do
    grep -q "^   $c\$" "$tmp/page1" && ok || bad "loopwise(1) has no entry for $c"
    for o in $("$LW" --complete "loopwise $c x.loop -"); do
        grep -qE -- "(^|[ ,])$o( |$)" "$tmp/page1" && ok || bad "loopwise(1) does not name $o"
    done
done

# loopwise(5)'s annotated example is a description the program accepts, and
# what the page says of it holds: a negative loop, measured at g1.
sed -n '/^\.SH EXAMPLE/,/^\.EE/p' "$D$P/share/man/man5/loopwise.5" | sed -n '/^\.EX/,/^\.EE/p' |
    sed '1d;$d' | sed "s/\\\\-/-/g; s/\\\\(aq/'/g" >"$tmp/example.loop"
"$LW" check "$tmp/example.loop" --json >"$tmp/example.json" 2>"$tmp/e" && ok ||
    bad "loopwise(5)'s example: $(head -n 1 "$tmp/e")"
$PY -c 'import json,sys; d=json.load(open(sys.argv[1])); assert d["break"] == "g1" and d["loops"][0]["sign"] == "negative" and d["stable"]' "$tmp/example.json" && ok || bad "loopwise(5)'s example: break, sign or stability"
"$LW" corners "$tmp/example.loop" >/dev/null 2>&1 && "$LW" response "$tmp/example.loop" --to out \
    >/dev/null 2>&1 && ok || bad "loopwise(5)'s example: corners or response refused"

# Only the entry points are exported: every defined global symbol is one
# that loopwise.h declares.
H="$D$P/include/loopwise/loopwise.h"
decl=$(sed -n 's/^LW_API [^(]*[ *]\(lw_[a-z_]*\)(.*/\1/p' "$H" | sort)
syms=$(nm -g --defined-only "$D$P/lib/libloopwise.a" | awk 'NF == 3 { print $3 }' | sort)
[ -n "$decl" ] && [ "$decl" = "$syms" ] && ok || bad "exported symbols differ from loopwise.h:
$(echo "$syms" | head)"
printf '#include <loopwise/loopwise.h>\nint main(void) { return lw_version()[0] != 0 ? 0 : 1; }\n' \
    >"$tmp/cxx.cc"
g++ -fsyntax-only -Wall -Wextra -I"$D$P/include" "$tmp/cxx.cc" 2>"$tmp/e" && ok ||
    bad "loopwise.h does not compile as C++: $(head -n 3 "$tmp/e")"

# The example, built through pkg-config against the staged install only
# (its prefix moved to where it is staged, as for a relocated install).
export PKG_CONFIG_PATH="$D$P/lib/pkgconfig"
flags=$(pkg-config --define-variable=prefix="$D$P" --cflags --libs loopwise 2>"$tmp/e")
[ $? = 0 ] && ok || bad "pkg-config loopwise: $(cat "$tmp/e")"
[ "$(pkg-config --modversion loopwise)" = "$("$LW" --version | cut -d' ' -f2)" ] && ok ||
    bad "loopwise.pc's version differs from the program's"
echo "$flags" | grep -q -- "-I$D$P/include" && echo "$flags" | grep -q -- "-lloopwise" &&
    echo "$flags" | grep -q -- "gsl" && echo "$flags" | grep -q -- "lapack" &&
    echo "$flags" | grep -q -- "klu" && ok ||
    bad "pkg-config --cflags --libs loopwise lacks the header, library, GSL, LAPACK or KLU: $flags"
$CC -std=c11 -Wall -Wextra -Werror -o "$tmp/loop_report" examples/loop_report.c $flags \
    2>"$tmp/e" && ok || bad "examples/loop_report.c does not build: $(head -n 5 "$tmp/e")"
# ... and against the build tree without installing, as the README says: the archive
# and the libraries 'make ldlibs' prints (the same program, the same output below)
$CC -std=c11 -Wall -Wextra -Werror -Iinclude -o "$tmp/loop_report_tree" examples/loop_report.c \
    build/dist/libloopwise.a $(make -s ldlibs) 2>"$tmp/e" && ok ||
    bad "examples/loop_report.c does not build against the tree with make ldlibs: $(head -n 5 "$tmp/e")"

F=cases/regulator.loop
"$tmp/loop_report" $F --set cout=3.3u --point esr=2 --response out >"$tmp/ex.json" 2>"$tmp/e" &&
    ok || bad "loop_report: $(cat "$tmp/e")"
"$tmp/loop_report_tree" $F --set cout=3.3u --point esr=2 --response out | cmp -s - "$tmp/ex.json" &&
    ok || bad "loop_report built against the tree gives other output than the installed one"
"$LW" check $F --set cout=3.3u --json >"$tmp/check.json"
"$LW" check $F --set cout=3.3u --pm 60 >/dev/null; pm60=$?
"$LW" sweep $F --set cout=3.3u --vary esr --from 2 --to 4 --points 2 --json >"$tmp/sweep.json"
"$LW" response $F --set cout=3.3u --to out --json >"$tmp/resp.json"
$PY - "$tmp" $pm60 <<'PYEOF' && ok || bad "loop_report's numbers differ from the program's JSON"
import json, sys
t, pm60 = sys.argv[1], int(sys.argv[2])
ex = json.load(open(t + "/ex.json"))
ck = json.load(open(t + "/check.json"))
sw = json.load(open(t + "/sweep.json"))["points"][0]
rs = json.load(open(t + "/resp.json"))
def same(a, b, what):
    assert a == b, "%s: %r (library) != %r (program)" % (what, a, b)
c = ex["check"]
for k in ("break", "dc_loop_gain", "dc_loop_gain_db", "crossover_hz", "phase_margin_deg",
          "gain_margin_db", "phase_crossover_hz", "stable", "dominance_db"):
    same(c[k], ck[k], k)
same(c["crossovers"], len(ck["crossovers"]), "crossovers")
for k in ("open_loop_poles", "open_loop_zeros", "closed_loop_poles"):
    same(len(c[k]), len(ck[k]), k)
    for a, b in zip(c[k], ck[k]):
        for f in a:
            same(a[f], b[f], "%s %s" % (k, f))
for a, b in zip(c["loops"], ck["loops"]):
    for f in ("name", "sign", "dc_gain", "measured_at"):
        same(a[f], b[f], "loop " + f)
same(c["verdict_pm60"], pm60, "verdict against 60 degrees (exit code)")
p = ex["point"]
same(p["value"], sw["value"], "point value")
for k in ("phase_margin_deg", "crossover_hz", "gain_margin_db", "dc_loop_gain", "stable"):
    same(p[k], sw[k], "point " + k)
r = ex["response"]
for k in ("dc", "dc_db", "hinf", "bandwidth_hz", "stable"):
    same(r[k], rs[k], "response " + k)
same(r["peak_hz"], rs["peak"]["hz"], "peak hz")
same(r["peak_value"], rs["peak"]["value"], "peak value")
same(r["peak_db"], rs["peak"]["db"], "peak db")
for k in ("poles", "zeros"):
    same(len(r[k]), len(rs[k]), k)
    for a, b in zip(r[k], rs[k]):
        same((a["re_hz"], a["im_hz"]), (b["re_hz"], b["im_hz"]), k)
s, q = r["step"], rs["step"]
for k in ("initial", "final", "peak_value", "peak_time_s", "overshoot_pct", "undershoot_pct",
          "rise_time_s"):
    same(s[k], q[k], "step " + k)
same(s["settle_1pct_s"], q["settle_s"]["1"], "settle 1%")
same(s["settle_01pct_s"], q["settle_s"]["0.1"], "settle 0.1%")
PYEOF
# its errors are the program's
"$tmp/loop_report" tests/bad/unknown_node.loop >"$tmp/o" 2>"$tmp/e"
[ $? = 2 ] && [ ! -s "$tmp/o" ] && [ "$(head -n 1 "$tmp/e")" = "$(cat tests/bad/unknown_node.err)" ] &&
    ok || bad "loop_report on a bad file: $(head -n 1 "$tmp/e")"
"$tmp/loop_report" $F --set nosuch=1 >"$tmp/o" 2>"$tmp/e"
[ $? = 2 ] && grep -q "unknown param or element 'nosuch'" "$tmp/e" && ok ||
    bad "loop_report --set nosuch: $(head -n 1 "$tmp/e")"
unset PKG_CONFIG_PATH

# make uninstall: nothing of ours is left, the other file is.
$MAKE --no-print-directory uninstall DESTDIR="$D" PREFIX="$P" >"$tmp/log" 2>&1 && ok ||
    { bad "make uninstall"; cat "$tmp/log"; }
left=$(cd "$D" && find . -type f | sed 's|^\.||')
[ "$left" = "$P/bin/other-tool" ] && ok || bad "after uninstall: $left"
[ ! -e "$D$P/include/loopwise" ] && ok || bad "uninstall left include/loopwise"

echo "install: $pass passed, $fail failed"
[ "$fail" = 0 ]
