#!/bin/sh
# The byte rules of the reader (SPEC section 2, issue 14) beyond the files of
# tests/bad/: standard input and the command line follow the same rules as a
# file, the caret shows the good text before the bad byte, and valid UTF-8 in
# comments, in any script, changes nothing.
LW=${1:-./loopwise}
. tests/golden/lib.sh
C='expected text with no control character but tab'
U='expected UTF-8 text with no control character but tab'

# exact WANT CMD...: exit 2, nothing on stdout, first line of stderr is WANT
exact() {
    want=$1
    shift
    "$@" >"$tmp/o" 2>"$tmp/e"
    rc=$?
    got=$(head -n 1 "$tmp/e")
    if [ "$rc" = 2 ] && [ ! -s "$tmp/o" ] && [ "$got" = "$want" ]; then ok
    else bad "$*: exit $rc"; echo "   got:      $got"; echo "   expected: $want"; fi
}

# Standard input: the same rules and positions, named <stdin>.
exact "<stdin>:2:13: NUL byte; $C" sh -c "\"$LW\" check - <tests/bad/nul_byte.loop"
exact "<stdin>:1:33: invalid UTF-8 sequence 0xC0 0xAF (an overlong encoding of U+002F); expected UTF-8 text (save the file as UTF-8)" \
    sh -c "\"$LW\" check - <tests/bad/utf8_overlong.loop"

# The caret line shows the text before the bad byte and points just past it.
"$LW" check tests/bad/nul_byte.loop 2>"$tmp/e" >/dev/null
[ "$(sed -n 2p "$tmp/e")" = "  node a r=10k" ] && [ "$(sed -n 3p "$tmp/e")" = "              ^" ] &&
    ok || bad "caret under a NUL byte: $(cat "$tmp/e")"

# Arguments: every option text and file name.
R=cases/twostage.loop
exact "loopwise: argument 4 (after --set), character 5: invalid UTF-8 sequence 0xC3 (truncated: 2 bytes expected, 1 before 0x70); $U" \
    "$LW" check $R --set "$(printf 'cc=1\303p')"
exact "loopwise: argument 4 (after --set), character 6: control character 0x0A (LF); $U" \
    "$LW" check $R --set "$(printf 'cc=1p\nx')"
exact "loopwise: argument 4 (after --pm), character 3: control character U+0085 (bytes 0xC2 0x85); $U" \
    "$LW" check $R --pm "$(printf '45\302\205')"
exact "loopwise: argument 2, character 6: control character 0x1B (ESC); $U" \
    "$LW" check "$(printf 'cases\033[2J.loop')"
exact "loopwise: argument 6 (after --vary), character 1: invalid UTF-8 sequence 0xED 0xBF 0xBF (the UTF-16 surrogate U+DFFF, not a character); $U" \
    "$LW" sweep $R --from 1p --vary "$(printf '\355\277\277')" --to 2p
exact "loopwise: argument 1, character 6: invalid UTF-8 sequence 0xF8 (a byte that never occurs in UTF-8); $U" \
    "$LW" "$(printf 'check\370')" $R
# A tab is text; valid UTF-8 (a micro sign) is a number's prefix.
"$LW" check $R --set "$(printf 'cc=\t1.2p')" --json >"$tmp/tab.json" 2>/dev/null
"$LW" check $R --json >"$tmp/plain.json" 2>/dev/null
"$LW" check $R --set "cc=0.5µF" --json >"$tmp/mu.json" 2>/dev/null
"$LW" check $R --set "cc=0.5uF" --json >"$tmp/u.json" 2>/dev/null
[ -s "$tmp/tab.json" ] && [ -s "$tmp/mu.json" ] &&
    cmp -s "$tmp/tab.json" "$tmp/plain.json" && cmp -s "$tmp/mu.json" "$tmp/u.json" && ok ||
    bad "a tab or a micro sign in --set"

# Comments in many scripts (2-, 3- and 4-byte sequences, right-to-left
# text, combining marks, the largest code point) change nothing.
for c in cases/*.loop; do
    "$LW" check "$c" --json >"$tmp/plain.json" 2>/dev/null
    {
        printf '# Ελληνικά, русский, עברית, العربية, हिन्दी, ไทย, 中文, 日本語, 한국어\n'
        printf '# e\314\201 (combining acute), \360\237\230\200 (U+1F600), \364\217\277\277 (U+10FFFF)\n'
        sed 's/$/ # µΩ ✓ 電源 🙂/' "$c"
    } >"$tmp/scripts.loop"
    "$LW" check "$tmp/scripts.loop" --json >"$tmp/scripts.json" 2>"$tmp/e"
    rc=$?
    sed 's|"file": "[^"]*"||' "$tmp/scripts.json" >"$tmp/a.json"
    sed 's|"file": "[^"]*"||' "$tmp/plain.json" >"$tmp/b.json"
    [ "$rc" -le 1 ] && cmp -s "$tmp/a.json" "$tmp/b.json" && ok ||
        bad "$c with UTF-8 comments: exit $rc, $(head -n 1 "$tmp/e")"
done

echo "bytes: $pass passed, $fail failed"
echo "$pass passed, $fail failed"
[ "$fail" = 0 ]
