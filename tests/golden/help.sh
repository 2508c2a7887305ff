#!/bin/sh
# Per-command help, suggestions and the bash completion (issue 13).
#
# The commands and the options each accepts are read from the program's own
# table through its completion interface (loopwise --complete LINE), never
# from a list kept here: every command's --help must exit 0 and name every
# option the command accepts, 'help COMMAND' must print the same page, and
# each help's example must run. The completion's node and value names are
# checked against the declarations read from the .loop file by awk.
LW=${1:-./loopwise}
. tests/golden/lib.sh
ROOT=$(pwd)

cmds=$("$LW" --complete "loopwise " | grep -v -e '^help$' -e '^-')
[ "$(echo "$cmds" | wc -l)" -ge 10 ] && ok || bad "the completion lists fewer than 10 commands: $cmds"

"$LW" --help >"$tmp/general" 2>"$tmp/e"
[ $? = 0 ] && [ ! -s "$tmp/e" ] && ok || bad "--help: exit code or stderr"
for c in $cmds; do
    grep -q "^  $c " "$tmp/general" && ok || bad "--help does not list the command $c"

    "$LW" "$c" --help >"$tmp/h" 2>"$tmp/e"
    rc=$?
    [ $rc = 0 ] && [ ! -s "$tmp/e" ] && ok || bad "$c --help: exit $rc, stderr $(head -n 1 "$tmp/e")"
    head -n 1 "$tmp/h" | grep -q "^usage: loopwise $c FILE" && ok || bad "$c --help: synopsis"
    "$LW" help "$c" >"$tmp/h2" 2>&1
    cmp -s "$tmp/h" "$tmp/h2" && ok || bad "help $c differs from $c --help"
    "$LW" "$c" cases/refcore.loop -h >"$tmp/h3" 2>&1
    cmp -s "$tmp/h" "$tmp/h3" && ok || bad "$c FILE -h differs from $c --help"

    # every option the command accepts, as the table says, is named as a word
    opts=$("$LW" --complete "loopwise $c cases/refcore.loop -")
    [ -n "$opts" ] && ok || bad "$c: the table gives no option"
    for o in $opts; do
        grep -qE -- "(^|[ ,])$o( |$)" "$tmp/h" && ok || bad "$c --help does not name $o"
    done
    # an option the command does not accept is not in its help
    for o in --lin --step --merge --tune; do
        if echo "$opts" | grep -qx -- "$o"; then continue; fi
        grep -qE -- "(^|[ ,])$o( |$)" "$tmp/h" && bad "$c --help names $o, which $c refuses" || ok
        "$LW" "$c" cases/refcore.loop "$o" "$tmp/x" >"$tmp/o" 2>"$tmp/e"
        [ $? = 2 ] && [ ! -s "$tmp/o" ] && grep -q -- "$o go.* with .*not '$c'" "$tmp/e" && ok ||
            bad "$c $o: not refused with a 'goes with' message: $(head -n 1 "$tmp/e")"
    done
    grep -q "(default: " "$tmp/h" && ok || bad "$c --help shows no default"

    # its example runs (in a scratch directory: examples write pictures and CSV)
    ex=$(sed -n '/^example:/{n;p;}' "$tmp/h" | sed 's/^ *loopwise //')
    [ -n "$ex" ] && ok || bad "$c --help has no example"
    # (once: a second 'ln -s' onto the existing link to a directory would
    # put a link inside the project's own cases/)
    mkdir -p "$tmp/ex" && { [ -L "$tmp/ex/cases" ] || ln -s "$ROOT/cases" "$tmp/ex/cases"; }
    (cd "$tmp/ex" && eval "\"$ROOT/$LW\" $ex" >/dev/null 2>"$tmp/e")
    rc=$?
    [ $rc -le 1 ] && ok || bad "$c --help's example '$ex' exits $rc: $(head -n 1 "$tmp/e")"
done

# Suggestions, and options refused with the commands that take them.
refuse "unknown option '--pn' (did you mean '--pm'?)" check cases/refcore.loop --pn 50
refuse "run 'loopwise check --help' for its options" check cases/refcore.loop --pn 50
refuse "unknown option '--vray' (did you mean '--vary'?)" sweep cases/refcore.loop --vray rser
refuse "unknown option '--sample' (did you mean '--samples'?)" montecarlo cases/refcore.loop --sample 10
refuse "unknown command 'chek' (did you mean 'check'?)" chek cases/refcore.loop
refuse "unknown command 'sweeep' (did you mean 'sweep'?)" help sweeep
refuse "--lin goes with 'sweep', not 'check'" check cases/refcore.loop --lin
refuse "--csv goes with 'gain', 'sweep' or 'response', not 'load'" load cases/refcore.loop \
    --node vref --cload 1p..1n --csv "$tmp/x.csv"
refuse "--samples and --seed go with 'montecarlo' or 'size --over montecarlo'" \
    size cases/refcore.loop --tune ccomp --samples 10
"$LW" help >"$tmp/h" 2>&1 && cmp -s "$tmp/h" "$tmp/general" && ok || bad "help differs from --help"

# Bash completion: the installed script, run as bash runs it.
comp() {
    LW_ABS=$ROOT/$LW bash -c '
        . completion/loopwise.bash
        COMP_LINE=$1; COMP_POINT=${#COMP_LINE}
        read -ra COMP_WORDS <<<"$1"
        case $1 in *" ") COMP_WORDS+=("") ;; esac
        COMP_CWORD=$((${#COMP_WORDS[@]} - 1)); COMP_WORDS[0]=$LW_ABS
        _loopwise
        [ ${#COMPREPLY[@]} = 0 ] || printf "%s\n" "${COMPREPLY[@]}" | sort' sh "$1"
}
expect() {
    got=$(comp "$1" | tr '\n' ' ')
    [ "$got" = "$2" ] && ok || bad "completion of '$1': got '$got', expected '$2'"
}
expect "loopwise ch" "check "
expect "loopwise mon" "montecarlo "
expect "loopwise help res" "response "
expect "loopwise sweep cases/refcore.loop --va" "--vary "
expect "loopwise check cases/refcore.loop --fm" "--fmax --fmin "
expect "loopwise size cases/refcore.loop --over " "corners montecarlo "
# names from the file on the line, against its declarations read by awk
names() { awk -v k="$2" '$1 == k { print $2 }' "$1" | sort | tr '\n' ' '; }
expect "loopwise load cases/refcore.loop --node " "$(names cases/refcore.loop node)"
expect "loopwise response cases/regulator.loop --to out --from " "$(names cases/regulator.loop input)"
expect "loopwise response cases/regulator.loop --inject " \
    "$( (names cases/regulator.loop node; echo each) | tr ' ' '\n' | grep . | sort | tr '\n' ' ')"
expect "loopwise sweep cases/refcore.loop --vary cc" \
    "$(awk '($1 == "param" || $1 == "cap" || $1 == "res" || $1 == "gm") && $2 ~ /^cc/ { print $2 }' \
        cases/refcore.loop | sort | tr '\n' ' ')"
expect "loopwise check cases/refcore.loop --set rs" "rs= rser= "
expect "loopwise check cases/refcore.loop --set vref." "vref.c= vref.r= "
expect "loopwise check cases/refcore.loop --set rs=1" ""
# a file argument, --merge's parts and -o complete as file names
expect "loopwise check cases/ref" "cases/refcore.loop "
expect "loopwise montecarlo cases/refcore.loop --merge cases/two" "cases/twostage.loop "
expect "loopwise gain cases/refcore.loop -o cases/reg" "cases/regulator.loop "
# never standard input or a pipe: no names, no wait
expect "loopwise load - --node " ""

echo "help: $pass passed, $fail failed"
[ "$fail" = 0 ]
