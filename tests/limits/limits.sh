# Limits tests, sourced by tests/golden/run.sh (uses its LW, PY, tmp, ok, bad).
# For every limit in the README's "Limits" section, an input exactly at the
# limit is accepted (exit 0 or 1) and one just past it is refused with exit
# 2, nothing on stdout, and a message that names the limit. The inputs are
# generated at run time by tests/limits/gen.py (see there for their shapes).
lim="$tmp/limits"
$PY tests/limits/gen.py "$lim" || bad "limits: generating the inputs failed"

# accepted NAME [ARGS...]: check on NAME_at.loop exits 0 or 1
accepted() {
    name=$1
    shift
    "$LW" check "$lim/${name}_at.loop" "$@" >"$tmp/o" 2>"$tmp/e"
    rc=$?
    [ "$rc" -le 1 ] && [ -s "$tmp/o" ] && ok ||
        bad "limits: $name at the limit: exit $rc, $(head -n 1 "$tmp/e")"
}

# refused NAME TEXT [ARGS...]: check on NAME_over.loop exits 2 with TEXT
refused() {
    name=$1
    want=$2
    shift 2
    "$LW" check "$lim/${name}_over.loop" "$@" >"$tmp/o" 2>"$tmp/e"
    rc=$?
    [ "$rc" = 2 ] && [ ! -s "$tmp/o" ] && head -n 1 "$tmp/e" | grep -qF -- "$want" && ok ||
        bad "limits: $name past the limit: exit $rc, $(head -n 1 "$tmp/e") (expected '$want')"
}

accepted file_size
refused file_size "file_size_over.loop:1:1: file is larger than 8 MiB"
accepted lines
refused lines "lines_over.loop:200001:1: too many lines (limit 200000)"
accepted line_bytes
refused line_bytes "line_bytes_over.loop:5:4097: line longer than 4096 bytes"
accepted tokens
refused tokens "too many tokens on one line (limit 512)"
accepted name
refused name "is longer than 64 characters"
accepted elements
refused elements "too many elements (limit 65536)"
accepted params
refused params "too many params (limit 65536)"
accepted loops
refused loops "too many loops (limit 256)"
accepted nesting
refused nesting "expression nested too deeply (limit 64 levels)"

# The line limit counts bytes without the line end: a 4096-byte line with
# CRLF is still accepted.
sed 's/$/\r/' "$lim/line_bytes_at.loop" >"$lim/line_bytes_crlf_at.loop"
accepted line_bytes_crlf

# 4096 nodes: analysing a network that size takes many minutes (dense
# matrices), so the file at the limit is only taken through the parser and
# the evaluation of every node and element: a --set that the evaluation of
# the last element refuses proves that everything before it was accepted.
"$LW" check "$lim/nodes_at.loop" --set rm4093=-1k >"$tmp/o" 2>"$tmp/e"
rc=$?
[ "$rc" = 2 ] && grep -q "^loopwise: --set rm4093: a resistance must be positive" "$tmp/e" && ok ||
    bad "limits: 4096 nodes not accepted by the parser: exit $rc, $(head -n 1 "$tmp/e")"
refused nodes "nodes_over.loop:8193:1: too many nodes (limit 4096)" --set rm4093=-1k

# A sweep takes up to 10,000 points, a gain table up to 100,000.
cat >"$lim/tiny.loop" <<'LOOPEOF'
node a r=10k c=1p
node b r=10k c=1p
gm ga a -> b -1m
gm gb b -> a 1m
res rv a gnd 100k
loop main negative a b
LOOPEOF
"$LW" sweep "$lim/tiny.loop" --vary rv --from 1k --to 1M --points 10000 --csv "$tmp/lim.csv" \
    >/dev/null 2>"$tmp/e"
rc=$?
[ "$rc" -le 1 ] && [ "$(wc -l <"$tmp/lim.csv")" = 10001 ] && ok ||
    bad "limits: sweep of 10000 points: exit $rc, $(head -n 1 "$tmp/e")"
"$LW" sweep "$lim/tiny.loop" --vary rv --from 1k --to 1M --points 10001 >"$tmp/o" 2>"$tmp/e"
[ $? = 2 ] && [ ! -s "$tmp/o" ] && grep -qF "a sweep takes at most 10000 points" "$tmp/e" && ok ||
    bad "limits: sweep of 10001 points: $(head -n 1 "$tmp/e")"
"$LW" gain "$lim/tiny.loop" --points 100000 --csv "$tmp/lim.csv" >/dev/null 2>"$tmp/e"
rc=$?
[ "$rc" = 0 ] && [ "$(wc -l <"$tmp/lim.csv")" = 100001 ] && ok ||
    bad "limits: gain of 100000 points: exit $rc, $(head -n 1 "$tmp/e")"
"$LW" gain "$lim/tiny.loop" --points 100001 >"$tmp/o" 2>"$tmp/e"
[ $? = 2 ] && [ ! -s "$tmp/o" ] && grep -qF "from 2 to 100000" "$tmp/e" && ok ||
    bad "limits: gain of 100001 points: $(head -n 1 "$tmp/e")"

# corners combines up to 12 ranged params (4096 corners); montecarlo takes up
# to 10,000,000 samples (only the refusal is run: that many take minutes).
"$LW" corners "$lim/corners_at.loop" >"$tmp/o" 2>"$tmp/e"
rc=$?
[ "$rc" -le 1 ] && grep -q "4096 corners" "$tmp/o" && ok ||
    bad "limits: corners of 12 ranged params: exit $rc, $(head -n 1 "$tmp/e")"
"$LW" corners "$lim/corners_over.loop" >"$tmp/o" 2>"$tmp/e"
[ $? = 2 ] && [ ! -s "$tmp/o" ] && grep -qF "more than the limit of 4096" "$tmp/e" && ok ||
    bad "limits: corners of 13 ranged params: $(head -n 1 "$tmp/e")"
"$LW" montecarlo "$lim/corners_at.loop" --samples 10000001 --seed 1 >"$tmp/o" 2>"$tmp/e"
[ $? = 2 ] && [ ! -s "$tmp/o" ] && grep -qF "from 1 to 10000000" "$tmp/e" && ok ||
    bad "limits: montecarlo of 10000001 samples: $(head -n 1 "$tmp/e")"
rm -rf "$lim" "$tmp/lim.csv"
