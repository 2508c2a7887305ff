#!/usr/bin/python3
"""Benchmark networks for `make bench`: feedback chains of gm-RC stages.

    /usr/bin/python3 bench/gen_net.py OUTDIR [N ...]      (default N: 8 32 128 512)

writes OUTDIR/chainN.loop for each N (N nodes in all) and prints one line per
file.  The networks are invented for the benchmark and deterministic (seeded).

Shape of chainN (K = 3N/4 chain nodes c0..c{K-1}, N/4 side nodes s*):
  - stage 0, gm g0: c{K-1} -> c0, inverting, gain about 1000, with the
    compensation cap `ccomp` from c0 to gnd: the dominant pole;
  - stage 1, gm g1: c0 -> c1, gain about 10 (the break);
  - stages 2..K-1: buffers c{j-1} -> c{j}, gain about 1 (gm = 1/r), each node
    with its own r and c to ground, poles in the GHz range;
  - every third chain node carries a side node through a res, with its own r
    and c (a pole-zero doublet the loop barely sees);
  - every fifth pair of neighbouring chain nodes is coupled by a cap;
  - the declared loop `main` runs through every chain node and is negative:
    g0 is the only inverting stage, so T(0) > 0.
T(0) comes out near 1e4 (9.3e3 .. 9.9e3); the crossover lies between 6 and
18 MHz with a phase margin from about 59 degrees (512 nodes) to 88 (8 nodes).
"""

import math
import os
import random
import sys

SIZES = (8, 32, 128, 512)
MAX_CHAIN = 384    # stages in the loop beyond 512 nodes
WIRE_LEN = 8       # nodes per interconnect ladder


def fmt(v, unit):
    """Engineering notation with an SI prefix the .loop format accepts."""
    for scale, pre in ((1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"),
                       (1e-6, "u"), (1e-9, "n"), (1e-12, "p"), (1e-15, "f")):
        if abs(v) >= scale * 0.9999999:
            return "%.4g%s%s" % (v / scale, pre, unit)
    return "%.4g%s" % (v, unit)


def network(n, seed):
    if n < 8 or n % 4:
        raise SystemExit("gen_net: N must be a multiple of 4, at least 8")
    rnd = random.Random(seed)
    jit = lambda lo, hi: lo * (hi / lo) ** rnd.random()   # log-uniform
    # a 'loop' line holds at most 512 tokens, so beyond 512 nodes the loop
    # keeps MAX_CHAIN stages and the other nodes are interconnect
    k = min(3 * n // 4, MAX_CHAIN)
    side = n // 4
    nwire = n - k - side
    out = ["# chain%d: %d gm-RC stages in one negative loop, %d side nodes,"
           % (n, k, side),
           "# coupling caps between neighbours%s (benchmark network, seed %d)"
           % (", %d interconnect nodes in RC ladders" % nwire if nwire else "", seed),
           "param cdom = 8p", ""]
    elems, nodes = [], []
    # chain nodes
    for j in range(k):
        if j == 0:
            r, c = 10e6, jit(20e-15, 40e-15)
        elif j == 1:
            r, c = 10e3, jit(10e-15, 20e-15)
        else:
            r, c = jit(1e3, 1.4e3), jit(10e-15, 20e-15)
        nodes.append(("c%d" % j, r, c))
    # side nodes, each on a chain node; the chain nodes they hang on are
    # spread over the whole chain
    taps = [1 + (3 * t) % (k - 2) for t in range(side)]
    for t, j in enumerate(taps):
        nodes.append(("s%d" % t, jit(1e6, 4e6), jit(0.5e-12, 2e-12)))
        elems.append("res rs%d c%d s%d %s" % (t, j, t, fmt(jit(80e3, 200e3), "")))
    # interconnect: RC ladders of WIRE_LEN nodes hanging off chain nodes
    # 2..k-1 in turn, as an extracted layout would add (segments of 20 to
    # 80 ohm, 1 to 3 fF to ground each: poles far above the loop's band)
    for w in range(nwire):
        lad, pos = divmod(w, WIRE_LEN)
        name = "w%d_%d" % (lad, pos)
        nodes.append((name, math.inf, jit(1e-15, 3e-15)))
        prev = "c%d" % (2 + lad % (k - 2)) if pos == 0 else "w%d_%d" % (lad, pos - 1)
        elems.append("res rw%d_%d %s %s %s" % (lad, pos, prev, name, fmt(jit(20, 80), "")))
    # coupling caps between neighbours
    for j in range(2, k - 1, 5):
        elems.append("cap cx%d c%d c%d %s" % (j, j, j + 1,
                                              fmt(jit(10e-15, 30e-15), "F")))
    elems.append("cap ccomp c0 gnd cdom")
    # stages: g0 closes the loop (inverting), g1 the gain stage, buffers
    gms = ["gm g0 c%d -> c0 %s" % (k - 1, fmt(-100e-6, "")),
           "gm g1 c0 -> c1 %s" % fmt(1e-3, "")]
    for j in range(2, k):
        gms.append("gm g%d c%d -> c%d %s" % (j, j - 1, j, fmt(1.0 / nodes[j][1], "")))
    for name, r, c in nodes:
        out.append("node %-5s r=%s c=%s" % (name, "inf" if math.isinf(r) else fmt(r, ""),
                                            fmt(c, "F")))
    out.append("")
    out += elems
    out.append("")
    out += gms
    out.append("")
    out.append("loop main negative " + " ".join("c%d" % j for j in range(k)))
    out.append("break g1")
    return "\n".join(out) + "\n"


def dc_gain(path):
    """T(0) at the break from the reference parser (a sanity check)."""
    here = os.path.dirname(os.path.abspath(__file__))
    sys.path.insert(0, os.path.join(here, "..", "tests", "ref"))
    import numpy as np
    import numpy_ref as nr
    net = nr.parse_loop_file(path)
    g0, _ = nr.build(net, off={net.brk})
    _, _, a, b, g = net.elem(net.brk)
    e = np.zeros(len(net.nodes))
    e[net.idx(b)] = 1.0
    return float(-g * np.linalg.solve(g0, e)[net.idx(a)])


def main(argv):
    if not argv:
        raise SystemExit("usage: gen_net.py OUTDIR [N ...]")
    outdir = argv[0]
    sizes = [int(a) for a in argv[1:]] or list(SIZES)
    os.makedirs(outdir, exist_ok=True)
    for n in sizes:
        path = os.path.join(outdir, "chain%d.loop" % n)
        text = network(n, seed=1000 + n)
        tmp = path + ".tmp"
        with open(tmp, "w", encoding="utf-8") as fh:
            fh.write(text)
        os.replace(tmp, path)
        t0 = dc_gain(path)
        if not t0 > 0:
            raise SystemExit("gen_net: %s has T(0) = %g; the declared negative "
                             "loop needs T(0) > 0" % (path, t0))
        print("  %-24s %4d nodes  T(0) = %.4g" % (path, n, t0))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
