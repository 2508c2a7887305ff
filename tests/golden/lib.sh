# Shared by the command-line test scripts (sourced, not run): counters, a
# scratch directory removed on exit, and refuse, which asserts exit code 2,
# nothing on stdout and a message containing the given text.
PY=/usr/bin/python3
pass=0
fail=0
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
ok() { pass=$((pass + 1)); }
bad() { fail=$((fail + 1)); echo "FAIL: $*"; }
refuse() {
    want=$1
    shift
    "$LW" "$@" >"$tmp/o" 2>"$tmp/e"
    rc=$?
    if [ "$rc" = 2 ] && [ ! -s "$tmp/o" ] && grep -qF -- "$want" "$tmp/e"; then ok
    else bad "$* -> exit $rc, stderr: $(head -n 1 "$tmp/e")"; fi
}
