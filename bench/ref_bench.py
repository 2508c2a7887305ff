#!/usr/bin/python3
"""Reference timings for `make bench`: the same analyses done the ordinary way.

    /usr/bin/python3 bench/ref_bench.py [--budget S] [--sweep N=POINTS ...] FILE.loop ...

For each network it times, with numpy/scipy from Debian:
  check  read + parse the file, stamp G and C, then
         open-loop poles and owner nodes: scipy.linalg.eig(-G0, C) with left
           and right vectors (participation factors);
         closed-loop poles: scipy.linalg.eig(-G, C);
         zeros: eig of the bordered pencil [[G0, e_o], [e_i^T, 0]], less the
           candidates that coincide with an open-loop pole (hidden modes);
         DC gain and each declared loop's own DC gain: one real solve each;
         T(jw) on a log grid over the band (60 points per decade, like the C
           engine), one numpy.linalg.solve per point, phase by numpy.unwrap;
         crossovers and phase crossings by brentq in log f.
  sweep  the margin computation above (owners, no declared loops) repeated for
         each value of the swept cap, log spaced, and brentq on the value
         wherever the margin crosses the target (60 degrees), like sweep_run.
  eval   T(jw) at one frequency: form Y0(jw), one numpy.linalg.solve.
and, once, numpy.linalg.eigvals of a dense 512 x 512 matrix ("eigvals512/s"),
the yardstick of the 512-node check's target.
Each measurement is repeated until it has taken --budget seconds (default 0.5)
or --max-reps runs, and the median per run is reported: a run longer than the
budget (the large networks) is done once.  Output: one flat JSON
object on stdout, keys "NAME/OP/FIELD" (NAME is the file name without .loop).
"""

import cmath
import ctypes
import json
import math
import os
import sys
import time

import numpy as np
import scipy.linalg as sla
from scipy.optimize import brentq

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "tests", "ref"))
import numpy_ref as nr  # noqa: E402  (its parser, stamps and gen_eig)

TWO_PI = 2.0 * math.pi
PER_DECADE = 60
SWEEP_CAP = "ccomp"
SWEEP_FROM, SWEEP_TO = 50e-15, 10e-12
SWEEP_PM = 60.0


class Analysis:
    """One whole margin analysis of a parsed network (frequencies in rad/s)."""

    def __init__(self, net, want_owner=True, want_loops=True):
        self.net = net
        n = len(net.nodes)
        _, _, a, b, g = net.elem(net.brk)
        i, o = net.idx(a), net.idx(b)
        G, C = nr.build(net)
        G0, _ = nr.build(net, off={net.brk})
        self.i, self.o, self.g, self.G0, self.C = i, o, g, G0, C
        self.e_o = np.zeros(n, dtype=complex)
        self.e_o[o] = 1.0

        # open-loop poles, owner nodes from participation factors
        lam, keep, vl, vr = nr.gen_eig(-G0, C, left=want_owner)
        self.poles = lam
        if want_owner:
            l, r = vl[:, keep], vr[:, keep]
            self.owner = np.argmax(np.abs(np.conj(l) * (C @ r)), axis=0)
        # closed-loop poles
        self.cl = nr.gen_eig(-G, C)[0]
        # zeros: bordered pencil, hidden modes cancelled against the poles
        A = np.zeros((n + 1, n + 1))
        B = np.zeros((n + 1, n + 1))
        A[:n, :n] = G0
        A[o, n] = 1.0
        A[n, i] = 1.0
        B[:n, :n] = C
        cand = nr.gen_eig(-A, B)[0]
        used = np.zeros(len(lam), dtype=bool)
        zeros = []
        for z in cand:
            d = np.abs(lam - z)
            d[used] = np.inf
            k = int(np.argmin(d)) if len(d) else -1
            if k >= 0 and d[k] <= 1e-6 * max(abs(z), abs(lam[k])):
                used[k] = True
            else:
                zeros.append(z)
        self.zeros = np.array(zeros, dtype=complex)
        # DC gains
        e = np.zeros(n)
        e[o] = 1.0
        self.dc = float(-g * np.linalg.solve(G0, e)[i])
        if want_loops:
            self.loops = self._own_gains()
        self.stable = bool(np.all(self.cl.real < 0))
        self._margins()

    def T(self, s):
        x = np.linalg.solve(self.G0 + s * self.C, self.e_o)
        return -self.g * x[self.i]

    def _own_gains(self):
        """Each declared loop's own DC gain at its first private gm (SPEC 1)."""
        net = self.net
        hops = [[[e[1] for e in net.elems if e[0] == "gm" and e[2] == a and
                  e[3] == nodes[(j + 1) % len(nodes)]]
                 for j, a in enumerate(nodes)] for _, _, nodes in net.loops]
        out = []
        for k in range(len(net.loops)):
            others = {x for j, h in enumerate(hops) if j != k for gms in h for x in gms}
            mine = [x for gms in hops[k] for x in gms]
            private = [x for x in mine if x not in others]
            if not private:
                out.append(None)
                continue
            off = {x for x in others if x not in mine} | {private[0]}
            _, _, a, b, g = net.elem(private[0])
            G0, _ = nr.build(net, off=off)
            e = np.zeros(len(net.nodes))
            e[net.idx(b)] = 1.0
            out.append(float(-g * np.linalg.solve(G0, e)[net.idx(a)]))
        return out

    def _margins(self):
        mags = np.abs(np.concatenate([self.poles, self.zeros, self.cl])) / TWO_PI
        mags = mags[mags > 1e-9 * mags.max()] if len(mags) else mags
        flo, fhi = (mags.min() / 1e3, mags.max() * 1e3) if len(mags) else (1.0, 1e9)
        npts = int(math.ceil(math.log10(fhi / flo) * PER_DECADE)) + 1
        u = np.linspace(math.log10(flo), math.log10(fhi), npts)
        t = np.array([self.T(1j * TWO_PI * 10.0 ** x) for x in u])
        # far above the poles |T| underflows to 0: keep the points where it is a number
        ok = np.isfinite(t) & (t != 0)
        u, t = u[ok], t[ok]
        npts = len(u)
        ph = np.degrees(np.unwrap(np.angle(t)))
        ph += 360.0 * round(((0.0 if self.dc > 0 else -180.0) - ph[0]) / 360.0)
        lm = np.log(np.abs(t))

        def phase_at(x, k):
            return ph[k] + math.degrees(cmath.phase(self.T(1j * TWO_PI * 10.0 ** x) / t[k]))

        def logmag(x):
            return math.log(abs(self.T(1j * TWO_PI * 10.0 ** x)))

        self.crossovers, self.phase_crossings = [], []
        for a in range(npts - 1):
            if lm[a] * lm[a + 1] < 0:
                x = brentq(logmag, u[a], u[a + 1], xtol=1e-13, rtol=1e-14)
                self.crossovers.append((10.0 ** x, 180.0 + phase_at(x, a)))
            qa = math.floor((ph[a] + 180.0) / 360.0)
            qb = math.floor((ph[a + 1] + 180.0) / 360.0)
            for q in range(min(qa, qb) + 1, max(qa, qb) + 1):
                target = -180.0 + 360.0 * q
                x = brentq(lambda v: phase_at(v, a) - target, u[a], u[a + 1],
                           xtol=1e-13, rtol=1e-14)
                self.phase_crossings.append(
                    (10.0 ** x, -20.0 * math.log10(abs(self.T(1j * TWO_PI * 10.0 ** x)))))
        best = min(self.crossovers, key=lambda c: c[1], default=(None, None))
        self.crossover_hz, self.pm = best
        self.gm_db = min((c[1] for c in self.phase_crossings), default=None)


def with_value(net, name, value):
    net.elems = [(k, nm, a, b, value if nm == name else v) for k, nm, a, b, v in net.elems]


def ref_check(path):
    return Analysis(nr.parse_loop_file(path))


def ref_sweep(path, npts):
    net = nr.parse_loop_file(path)
    orig = net.elem(SWEEP_CAP)[4]

    def margin(v):
        with_value(net, SWEEP_CAP, v)
        a = Analysis(net, want_owner=True, want_loops=False)
        return -1e3 if a.pm is None else a.pm - SWEEP_PM

    vals = [SWEEP_FROM * (SWEEP_TO / SWEEP_FROM) ** (k / (npts - 1)) for k in range(npts)]
    dist = [margin(v) for v in vals]
    crossings = []
    for k in range(1, npts):
        if (dist[k - 1] >= 0) != (dist[k] >= 0):
            x = brentq(lambda lv: margin(math.exp(lv)), math.log(vals[k - 1]),
                       math.log(vals[k]), xtol=1e-7)
            crossings.append(math.exp(x))
    with_value(net, SWEEP_CAP, orig)
    return crossings


def ref_eval(a, hz):
    return a.T(1j * TWO_PI * hz)


CPU_WALL = [0.0, 0.0]   # process CPU time and wall time over every timed run


def timed(fn, budget, max_reps, min_reps=1):
    times = []
    start, cpu0 = time.monotonic(), time.process_time()
    while len(times) < min_reps or (time.monotonic() - start < budget and
                                    len(times) < max_reps):
        t0 = time.monotonic()
        res = fn()
        times.append(time.monotonic() - t0)
    CPU_WALL[0] += time.process_time() - cpu0
    CPU_WALL[1] += time.monotonic() - start
    return float(np.median(times)), len(times), res


def blas_in_use():
    """The BLAS and LAPACK libraries numpy has loaded (read from the process's
    own memory map, so LD_LIBRARY_PATH and Debian's alternatives are both
    accounted for), and OpenBLAS's kernel set when it is OpenBLAS."""
    names = []
    with open("/proc/self/maps", encoding="utf-8") as fh:
        for line in fh:
            path = line.split()[-1]
            base = os.path.basename(path)
            if base.startswith("lib") and ("blas" in base or "lapack" in base) and path not in names:
                names.append(path)
    core = ""
    for path in names:
        if "openblas" in os.path.basename(path):
            try:
                lib = ctypes.CDLL(path)
                lib.openblas_get_corename.restype = ctypes.c_char_p
                core = lib.openblas_get_corename().decode()
            except (OSError, AttributeError):
                pass
    return ", ".join(names), core


def dense_eigvals(n, reps=5):
    """numpy.linalg.eigvals of a dense n x n matrix (seeded normal entries):
    the yardstick the 512-node check is measured against."""
    a = np.random.default_rng(12).standard_normal((n, n))
    times = []
    for _ in range(reps):
        t0 = time.monotonic()
        np.linalg.eigvals(a)
        times.append(time.monotonic() - t0)
    return float(np.median(times))


def main(argv):
    budget, max_reps, sweeps, files = 0.5, 1000000, {}, []
    it = iter(argv)
    for a in it:
        if a == "--budget":
            budget = float(next(it))
        elif a == "--max-reps":
            max_reps = int(next(it))
        elif a == "--sweep":
            n, p = next(it).split("=")
            sweeps[int(n)] = int(p)
        else:
            files.append(a)
    import scipy
    eig512 = dense_eigvals(512)
    blas, core = blas_in_use()
    out = {"budget_s": budget, "numpy": np.__version__, "scipy": scipy.__version__,
           "blas": blas, "blas_core": core, "eigvals512/s": eig512,
           "blas_env": " ".join("%s=%s" % (k, os.environ[k]) for k in sorted(os.environ)
                                if k.startswith("OPENBLAS")) or "none"}
    for path in files:
        name = os.path.splitext(os.path.basename(path))[0]
        nnodes = len(nr.parse_loop_file(path).nodes)
        sec, n, a = timed(lambda: ref_check(path), budget, max_reps)
        out.update({name + "/nodes": nnodes, name + "/check/s": sec, name + "/check/reps": n,
                    name + "/dc": a.dc, name + "/pm_deg": a.pm,
                    name + "/crossover_hz": a.crossover_hz, name + "/gm_db": a.gm_db,
                    name + "/stable": a.stable})
        hz = a.crossover_hz or 1e6
        sec, n, _ = timed(lambda: ref_eval(a, hz), budget, 10 ** 6, min_reps=20)
        out.update({name + "/eval/s": sec, name + "/eval/reps": n})
        if nnodes in sweeps:
            p = sweeps[nnodes]
            sec, n, cr = timed(lambda: ref_sweep(path, p), budget, max_reps)
            out.update({name + "/sweep/s": sec, name + "/sweep/reps": n,
                        name + "/sweep/points": p, name + "/sweep/ncross": len(cr),
                        name + "/sweep/first": cr[0] if cr else None})
        print("ref_bench: %s done" % name, file=sys.stderr, flush=True)
    out["all/cpu_s"], out["all/wall_s"] = CPU_WALL
    json.dump(out, sys.stdout, indent=1)
    print()
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
