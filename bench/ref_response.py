#!/usr/bin/python3
"""Reference timings of the closed-loop responses for `make bench`: the same
figures computed the ordinary way with numpy/scipy (Debian).

    /usr/bin/python3 bench/ref_response.py [--budget S] [--sweep N=P] chainN.loop ...

For each network (read-out: the last chain node; source: a current into c0):
  step      the margin analysis of ref_bench.py (poles, zeros, margins), then
            the response: a state-space realization of H (numpy's eigh of C,
            a Schur complement on its null space), |H| on 121 frequencies and
            on 60 points per decade for the peak (dense solves), and the step by
            scipy.signal.step on 4000 points to 20 time constants of the
            slowest pole (time-stepping), overshoot and 1% settling from it;
  each      the step (as above) of a current into every node;
  sweep_to  P log-spaced values of ccomp (50 fF to 10 pF), at each the margin
            analysis and the response's overshoot, settling and peak.
Output: one flat JSON object, keys "NAME/OP/s" (median seconds per run).
"""

import json
import math
import os
import sys
import time

import numpy as np
import scipy.signal as ss

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
sys.path.insert(0, os.path.join(HERE, "..", "tests", "ref"))
import numpy_ref as nr  # noqa: E402
import ref_bench as rb  # noqa: E402
import response_ref as rr  # noqa: E402

TWO_PI = 2.0 * math.pi


def ends(net):
    k = 3 * len(net.nodes) // 4
    return "c%d" % (k - 1), "c0"


def step_figures(resp):
    """Overshoot and 1% settling from scipy.signal.step (lsim on a grid)."""
    lam = np.linalg.eigvals(resp.A)
    tend = 20.0 / min(-z.real for z in lam)
    t = np.linspace(0.0, tend, 4000)
    _, y = ss.step(ss.StateSpace(resp.A, resp.b[:, None], resp.c[None, :], [[resp.d]]), T=t)
    fin = resp.dc
    over = 100.0 * max(0.0, np.sign(fin) * (y.max() if fin > 0 else y.min()) - abs(fin)) / abs(fin)
    out = np.flatnonzero(np.abs(y - fin) > 0.01 * abs(fin))
    return over, (t[out[-1]] if len(out) else 0.0)


def peak(resp):
    """The largest |H| on a grid of 60 points per decade (as ref_bench.py
    scans T) from 1/1000 of the slowest to 1000 times the fastest pole."""
    m = np.abs(resp.poles)
    m = m[m > 0]
    flo, fhi = m.min() / TWO_PI / 1e3, m.max() / TWO_PI * 1e3
    f = np.geomspace(flo, fhi, int(math.ceil(math.log10(fhi / flo) * rb.PER_DECADE)) + 1)
    return 20 * math.log10(np.abs(resp.Hs(1j * TWO_PI * f)).max())


def one_step(path):
    net = nr.parse_loop_file(path)
    a = rb.Analysis(net)
    to, src = ends(net)
    resp = rr.Resp(net, to, "inject", src)
    m = np.abs(resp.poles)
    np.abs(resp.Hs(1j * TWO_PI * np.geomspace(m.min() / TWO_PI / 1e3, m.max() / TWO_PI * 1e3, 121)))
    return step_figures(resp) + (peak(resp),)


def one_each(path):
    net = nr.parse_loop_file(path)
    rb.Analysis(net)
    to, _ = ends(net)
    worst = 0.0
    for node in net.nodes:
        resp = rr.Resp(net, to, "inject", node)
        if resp.reaches and resp.dc != 0:
            worst = max(worst, step_figures(resp)[0])
    return worst


def one_sweep(path, npts):
    net = nr.parse_loop_file(path)
    to, src = ends(net)
    rows = []
    for k in range(npts):
        v = rb.SWEEP_FROM * (rb.SWEEP_TO / rb.SWEEP_FROM) ** (k / (npts - 1))
        rb.with_value(net, rb.SWEEP_CAP, v)
        a = rb.Analysis(net, want_owner=False, want_loops=False)
        resp = rr.Resp(net, to, "inject", src)
        over, settle = step_figures(resp) if a.stable else (None, None)
        rows.append((v, a.pm, over, settle, peak(resp)))
    return rows


def main(argv):
    budget, sweeps, files = 0.5, {}, []
    it = iter(argv)
    for a in it:
        if a == "--budget":
            budget = float(next(it))
        elif a == "--sweep":
            n, p = next(it).split("=")
            sweeps[int(n)] = int(p)
        else:
            files.append(a)
    out = {}
    for path in files:
        name = os.path.splitext(os.path.basename(path))[0]
        n = len(nr.parse_loop_file(path).nodes)
        for op, fn in (("step", lambda: one_step(path)), ("each", lambda: one_each(path))):
            sec, reps, _ = rb.timed(fn, budget, 1000)
            out.update({"%s/%s/s" % (name, op): sec, "%s/%s/reps" % (name, op): reps})
        if n in sweeps:
            sec, reps, _ = rb.timed(lambda: one_sweep(path, sweeps[n]), budget, 1)
            out.update({"%s/sweep_to/s" % name: sec, "%s/sweep_to/points" % name: sweeps[n]})
        print("ref_response: %s done" % name, file=sys.stderr, flush=True)
    json.dump(out, sys.stdout, indent=1)
    print()
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
