#!/usr/bin/python3
"""The compensation table of 'check' (issue 18) against the numpy/scipy
reference of numpy_ref.py.

For every row of check --json's compensation_table (a node's capacitance to
ground, or a cap or res element, floating ones included) the reference
builds the network with that value doubled and halved, finds the phase
margin with its own parser, stamps and margin search, and compares the
change with the row's pm_change_double_deg and pm_change_half_deg (1e-6
degrees).  A node's row scales its whole capacitance to ground: its c plus
every cap from it to gnd.

    LOOPWISE=./loopwise /usr/bin/python3 tests/ref/comp_table.py [FILE.loop ...]

With no files, every reference network but 06_wide_range.loop, whose
doubled hold capacitor puts a pole at 0.008 Hz where the reference's own
phase grid fails to anchor (the reference's limit, not loopwise's).
"""

import copy
import glob
import json
import os
import subprocess
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import numpy_ref  # noqa: E402  (the reference lives beside this script)

HERE = os.path.dirname(os.path.abspath(__file__))
TOL_DEG = 1e-6


def changed(net, row, f):
    """A copy of net with the row's value times f."""
    n = copy.deepcopy(net)
    if row["kind"] == "node":
        k = n.nodes.index(row["name"])
        cg = n.node_c[k] + sum(e[4] for e in n.elems
                               if e[0] == "cap" and e[2] == row["name"] and e[3] == "gnd")
        n.node_c[k] += (f - 1.0) * cg
    else:
        n.elems = [(e[0], e[1], e[2], e[3], e[4] * f) if e[1] == row["name"] else e
                   for e in n.elems]
    return n


def main(argv):
    exe = os.environ.get("LOOPWISE", "./loopwise")
    files = argv or [p for p in sorted(glob.glob(os.path.join(HERE, "nets", "*.loop")))
                     if not p.endswith("06_wide_range.loop")]
    passed = failed = 0
    for path in files:
        base = os.path.basename(path)
        net = numpy_ref.parse_loop_file(path)
        pm0 = numpy_ref.Ref(net).pm
        out = subprocess.run([exe, "check", path, "--json"], capture_output=True, timeout=120)
        js = json.loads(out.stdout)
        rows = js.get("compensation_table", [])
        kinds = {r["kind"] for r in rows}
        want = {"node"} | {e[0] for e in net.elems if e[0] in ("cap", "res")}
        # no margin at all: no change is defined either
        ok = kinds == want and (pm0 is not None or all(
            r["pm_change_double_deg"] is None and r["pm_change_half_deg"] is None for r in rows))
        effects = [max(abs(r[k]) for k in ("pm_change_double_deg", "pm_change_half_deg")
                       if r[k] is not None) for r in rows
                   if r["pm_change_double_deg"] is not None or r["pm_change_half_deg"] is not None]
        ok = ok and effects == sorted(effects, reverse=True)
        print("%s %s table: rows %s, sorted by effect" % ("PASS" if ok else "FAIL", base,
                                                         sorted(kinds)))
        passed, failed = passed + ok, failed + (not ok)
        if pm0 is None:
            continue
        for row in rows:
            for key, f in (("pm_change_double_deg", 2.0), ("pm_change_half_deg", 0.5)):
                pm = numpy_ref.Ref(changed(net, row, f)).pm
                got = row[key]
                want = None if pm is None else pm - pm0
                good = (want is None and got is None) or (
                    want is not None and got is not None and abs(got - want) < TOL_DEG)
                print("%s %s %s %s x%g: ref %s, reported %s" % (
                    "PASS" if good else "FAIL", base, row["kind"], row["name"], f, want, got))
                passed, failed = passed + good, failed + (not good)
    print("%d passed, %d failed" % (passed, failed))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
