#!/usr/bin/python3
"""Independent reference for 'loopwise response' (SPEC section 6).

    /usr/bin/python3 tests/ref/response_ref.py --selftest
    LOOPWISE=./loopwise /usr/bin/python3 tests/ref/response_ref.py [FILE.loop ...]

With no files, every tests/ref/resp/*.loop is checked, each for the
responses its '#% response ...' lines name.  One line per check; the last
line is "N passed, M failed", and the exit status is 1 when any failed.

The reference shares none of the C code's numerics.  H(jw) is one dense
complex solve of (G + jwC) v = b0 + jw b1 per frequency.  Poles are the
finite generalized eigenvalues of (-G, C) (scipy QZ); zeros those of the
bordered pencil [[-G, b0], [e_to^T, 0]] - s [[C, -b1], [0, 0]] (one below
1e-9 of the largest pole is at s = 0 only when that pencil is singular at
s = 0, as H(0) = 0 requires).  The step
response comes from a state-space realization built here (numpy's eigh of C,
a Schur complement on its null space; checked against the dense H before
use) and scipy.linalg.expm of the augmented matrix [[A, b], [0, 0]] t, whose
top-right block is the integral of e^(As) b from 0 to t: y(t) = d + c^T that.
Extrema are roots of y'(t) = c^T e^(At) b (brentq), and every reported time
is refined by brentq on y(t) itself.  The slow mode comes from numpy's
eigenvectors of A (residues r_k, amplitude |r/p|, 2|r/p| for a pair).
"""

import json
import math
import os
import subprocess
import sys

import numpy as np
import scipy.linalg as sla
from scipy.optimize import brentq

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
import numpy_ref as R  # noqa: E402

TWO_PI = 2.0 * math.pi


def source(net, kind, name):
    """b0, b1 (SPEC section 6) from the net's element list, stamped here."""
    n = len(net.nodes)
    b0, b1 = np.zeros(n), np.zeros(n)
    if kind == "inject":
        b0[net.idx(name)] = 1.0
        return b0, b1
    for kindE, nm, a, b, v in net.elems:
        if kindE in ("res", "cap") and b == name:
            if kindE == "res":
                b0[net.idx(a)] += 1.0 / v
            else:
                b1[net.idx(a)] += v
        elif kindE == "gm" and a == name:
            b0[net.idx(b)] += v
    return b0, b1


class Resp:
    def __init__(self, net, to, kind, name):
        self.G, self.C = R.build(net)
        self.n = len(net.nodes)
        self.to = net.idx(to)
        self.b0, self.b1 = source(net, kind, name)
        lam, _, _, _ = R.gen_eig(-self.G, self.C)
        self.poles = sorted(lam, key=lambda z: (abs(z), z.imag))
        self.stable = all(z.real < 0 for z in lam)
        self.dc = np.linalg.solve(self.G, self.b0)[self.to]
        self.reaches = self.path()
        if not self.reaches:
            return
        self.realize()
        self.find_zeros()

    def path(self):
        """Whether a chain of couplings (nonzero G or C entries) leads from
        the source to the read-out: otherwise H is identically zero."""
        P = (self.G != 0) | (self.C != 0)
        seen = set(np.flatnonzero((self.b0 != 0) | (self.b1 != 0)))
        todo = list(seen)
        while todo:
            k = todo.pop()
            for l in np.flatnonzero(P[:, k]):
                if l not in seen:
                    seen.add(l)
                    todo.append(l)
        return self.to in seen

    def find_zeros(self):
        """Finite eigenvalues of the bordered pencil; a candidate on a pole
        is a mode H cannot see (both leave the lists)."""
        n = self.n
        A = np.zeros((n + 1, n + 1))
        B = np.zeros((n + 1, n + 1))
        A[:n, :n], A[:n, n], A[n, self.to] = -self.G, self.b0, -1.0
        B[:n, :n], B[:n, n] = self.C, -self.b1
        cand, _, _, _ = R.gen_eig(A, B)
        big = max(abs(p) for p in self.poles) if self.poles else 1.0
        # a candidate below 1e-9 of the largest pole is at s = 0 (SPEC 1) only
        # where s = 0 can be a zero: H(0) = 0, the bordered matrix A singular
        # (smallest singular value below 1e-13 of the largest once its rows
        # and columns are scaled to unit largest entry)
        Ae = A / np.maximum(np.abs(A).max(axis=1, keepdims=True), 1e-300)
        Ae = Ae / np.maximum(np.abs(Ae).max(axis=0, keepdims=True), 1e-300)
        sv = np.linalg.svd(Ae, compute_uv=False)
        origin_ok = sv[-1] <= 1e-13 * sv[0]
        cand = [z for z in cand if abs(z) < 1e6 * big]
        self.hidden = set()
        self.zeros = []
        for z in cand:
            near = [k for k, p in enumerate(self.poles) if k not in self.hidden and
                    abs(p - z) <= 1e-6 * max(abs(p), abs(z))]
            if near:
                self.hidden.add(near[0])
            else:
                self.zeros.append(0j if origin_ok and abs(z) <= 1e-9 * big else z)

    def H(self, s):
        v = np.linalg.solve(self.G + s * self.C, self.b0 + s * self.b1)
        return v[self.to]

    def Hs(self, s):
        """H at every s of an array: one batched dense solve."""
        s = np.asarray(s, dtype=complex)
        Y = self.G[None, :, :] + s[:, None, None] * self.C[None, :, :]
        rhs = self.b0[None, :] + s[:, None] * self.b1[None, :]
        return np.linalg.solve(Y, rhs[:, :, None])[:, self.to, 0]

    def realize(self):
        """A, b, c, d with c^T (sI - A)^-1 b + d = H(s)."""
        G, C = self.G, self.C
        lam, V = np.linalg.eigh(C)
        keep = lam > 1e-12 * max(lam.max(), 1e-300)
        Vr, Vn, lr = V[:, keep], V[:, ~keep], lam[keep]
        w = np.linalg.lstsq(C, self.b1, rcond=None)[0]
        bu = self.b0 - G @ w
        e = np.zeros(self.n)
        e[self.to] = 1.0
        if Vn.shape[1]:
            K = np.linalg.inv(Vn.T @ G @ Vn)
            P = np.eye(self.n) - G @ Vn @ K @ Vn.T   # removes the algebraic part
            A = -np.diag(1 / lr) @ (Vr.T @ P @ G @ Vr)
            b = np.diag(1 / lr) @ (Vr.T @ P @ bu)
            c = (e @ Vr) - (e @ Vn) @ K @ (Vn.T @ G @ Vr)
            d = (e @ Vn) @ K @ (Vn.T @ bu) + w[self.to]
        else:
            A = -np.diag(1 / lr) @ (Vr.T @ G @ Vr)
            b = np.diag(1 / lr) @ (Vr.T @ bu)
            c = e @ Vr
            d = w[self.to]
        self.A, self.b, self.c, self.d = A, b, c, float(d)
        # the realization must reproduce the dense H
        big = max(abs(p) for p in self.poles) if self.poles else 1.0
        for s in (1j * big * 1e-3, 1j * big * 0.37, 1j * big * 5):
            h = self.H(s)
            hs = c @ np.linalg.solve(s * np.eye(len(lr)) - A, b) + d
            assert abs(h - hs) <= 1e-7 * max(abs(h), abs(self.d), abs(self.dc), 1e-300), \
                (s, h, hs)

    # ---- the step response ---------------------------------------------
    def y(self, t):
        r = self.A.shape[0]
        M = np.zeros((r + 1, r + 1))
        M[:r, :r] = self.A * t
        M[:r, r] = self.b * t
        E = sla.expm(M)
        return self.d + self.c @ E[:r, r]

    def dy(self, t):
        return self.c @ sla.expm(self.A * t) @ self.b

    def step(self):
        """The figures of SPEC section 6, computed here from expm."""
        lam = np.linalg.eigvals(self.A)
        rate = min(-z.real for z in lam)
        fast = max(abs(z) for z in lam)
        osc = max(abs(z.imag) for z in lam)
        tend = 45.0 / rate
        # a geometric grid, each point by expm, and a uniform one by the
        # exact discretization x(t + h) = e^(Ah) x(t) + int_0^h e^(As) b ds
        # of the step (no approximation: the input is constant)
        tg = np.geomspace(1e-4 / fast, tend, 600)
        yg = np.array([self.y(t) for t in tg])
        dyg = np.array([self.dy(t) for t in tg])
        nu = int(min(20000, max(2000, 12 * tend * osc / TWO_PI * 4)))
        h = tend / nu
        r = self.A.shape[0]
        M = np.zeros((r + 1, r + 1))
        M[:r, :r], M[:r, r] = self.A * h, self.b * h
        E = sla.expm(M)
        Ed, Fd = E[:r, :r], E[:r, r]
        x = np.zeros(r)
        tu, yu, dyu = [0.0], [self.d], [self.c @ self.b]
        for k in range(1, nu + 1):
            x = Ed @ x + Fd
            tu.append(k * h)
            yu.append(self.d + self.c @ x)
            dyu.append(self.c @ (self.A @ x + self.b))
        order = np.argsort(np.concatenate([tu, tg]), kind="stable")
        ts = np.concatenate([tu, tg])[order]
        ys = np.concatenate([yu, yg])[order]
        dys = np.concatenate([dyu, dyg])[order]
        pts = []
        for i in range(len(ts)):
            pts.append((ts[i], ys[i]))
            if i + 1 < len(ts) and dys[i] * dys[i + 1] < 0 and \
                    self.dy(ts[i]) * self.dy(ts[i + 1]) < 0:
                te = brentq(self.dy, ts[i], ts[i + 1], xtol=1e-300, rtol=1e-13)
                pts.append((te, self.y(te)))
        pt = np.array([p[0] for p in pts])
        py = np.array([p[1] for p in pts])
        fin = self.dc
        out = {"initial": self.d, "final": fin}
        sg = np.sign(fin)
        if sg != 0:
            j = int(np.argmax(sg * py))
            if sg * (py[j] - fin) > 1e-9 * abs(fin):
                out["peak_value"], out["peak_time_s"] = py[j], pt[j]
                out["overshoot_pct"] = 100 * sg * (py[j] - fin) / abs(fin)
            else:
                out["peak_value"], out["peak_time_s"], out["overshoot_pct"] = fin, None, 0.0
            under = max(0.0, -sg * py.min() if sg > 0 else py.max())
            out["undershoot_pct"] = 100 * under / abs(fin)
            if sg * self.d >= 0.1 * abs(fin):
                out["rise_time_s"] = None
            else:
                def reach(level):
                    k = next(i for i in range(len(py)) if sg * (py[i] - level) >= 0)
                    return brentq(lambda t: self.y(t) - level, pt[k - 1], pt[k],
                                  xtol=1e-300, rtol=1e-13)
                out["rise_time_s"] = reach(0.9 * fin) - reach(0.1 * fin)
            base = abs(fin)
        else:
            j = int(np.argmax(np.abs(py)))
            out["peak_value"] = py[j]
            out["peak_time_s"] = pt[j] if abs(py[j]) > 0 else None
            out["overshoot_pct"] = out["undershoot_pct"] = out["rise_time_s"] = None
            base = abs(py[j])
        settle = {}
        for key, band in (("1", 0.01), ("0.1", 0.001)):
            idx = [i for i in range(len(py)) if abs(py[i] - fin) > band * base]
            if not idx:
                settle[key] = 0.0
                continue
            k = idx[-1]
            lev = fin + (band * base if py[k] > fin else -band * base)
            settle[key] = brentq(lambda t: self.y(t) - lev, pt[k], pt[k + 1],
                                 xtol=1e-300, rtol=1e-13)
        out["settle_s"] = settle
        # the slow mode from the residues of the eigen-decomposition
        w, V = np.linalg.eig(self.A)
        bt = np.linalg.solve(V, self.b)
        ct = self.c @ V
        best, slow = -math.inf, None
        for k in range(len(w)):
            if w[k].imag < 0:
                continue
            amp = abs(ct[k] * bt[k] / w[k]) * (2 if w[k].imag > 0 else 1) / base
            if amp <= 0:
                continue
            life = math.log(amp / 1e-3) / -w[k].real
            if life > best:
                best, slow = life, (w[k], amp)
        out["slow_mode"] = slow
        return out


# ---- self-test against closed forms ---------------------------------------

def selftest():
    # second order, zeta 0.3, wn 2 pi 1 MHz: overshoot exp(-pi zeta /
    # sqrt(1 - zeta^2)), peak time pi / (wn sqrt(1 - zeta^2)) (textbook, from
    # memory), and a one-pole RC: 1% settling at tau ln 100
    zeta, wn = 0.3, TWO_PI * 1e6
    text = """input vin
node x r=inf c=1p
node out r=%r c=1p
gm gi vin -> x 1m
gm gf out -> x -1m
gm ga x -> out %r
loop main negative x out
break ga
""" % (1 / (2 * zeta * wn * 1e-12), wn * wn * 1e-24 / 1e-3)
    r = Resp(R.parse_loop_text(text), "out", "input", "vin")
    s = r.step()
    os_ = 100 * math.exp(-math.pi * zeta / math.sqrt(1 - zeta * zeta))
    tp = math.pi / (wn * math.sqrt(1 - zeta * zeta))
    assert abs(s["overshoot_pct"] - os_) < 1e-7, (s["overshoot_pct"], os_)
    assert abs(s["peak_time_s"] / tp - 1) < 1e-9
    text = """input vin
node out r=1k c=1n
res rin vin out 1k
gm g out -> out 0
break g
"""
    r = Resp(R.parse_loop_text(text), "out", "input", "vin")
    s = r.step()
    tau = 500.0 * 1e-9
    assert abs(s["settle_s"]["1"] / (tau * math.log(100)) - 1) < 1e-9
    assert abs(s["final"] - 0.5) < 1e-12 and s["overshoot_pct"] == 0.0
    print("selftest passed")
    return 0


# ---- comparison -----------------------------------------------------------

# Responses of the demo cases, checked as the generated ones are.
CASES = [("regulator.loop", "--to out --from vin"), ("regulator.loop", "--to out --inject out"),
         ("regulator.loop", "--to gate --from vin"), ("regulator.loop", "--to out --inject each")]


def directives(path):
    out = []
    for line in open(path, encoding="utf-8"):
        if line.startswith("#% response "):
            out.append(line[len("#% response "):].split())
    return out


def compare_each(path, to, exe, tally):
    """--inject each against one reference step per node, and its order."""
    net = R.parse_loop_file(path)
    L = "%s [--to %s --inject each]: " % (os.path.basename(path), to)
    proc = subprocess.run([exe, "response", path, "--json", "--to", to, "--inject", "each"],
                          capture_output=True, timeout=120)
    try:
        d = json.loads(proc.stdout)
    except ValueError:
        tally.check(False, L + "json", proc.stdout[:200])
        return
    got = {i["node"]: i for i in d["injections"]}
    tally.check(sorted(got) == sorted(net.nodes), L + "every node", repr(sorted(got)))
    for node in net.nodes:
        ref = Resp(net, to, "inject", node)
        g = got.get(node)
        if g is None:
            continue
        if not ref.reaches:
            tally.check(g["final"] == 0 and g["peak_value"] == 0 and g["overshoot_pct"] is None,
                        L + node + " does not reach " + to, repr(g))
            continue
        s = ref.step()
        scale = max(abs(s["final"]), abs(s["peak_value"]))
        R.num_close(tally, L + node + " final", s["final"], g["final"], abs_=1e-9 * scale)
        R.num_close(tally, L + node + " peak", s["peak_value"], g["peak_value"], abs_=1e-9 * scale)
        R.num_close(tally, L + node + " overshoot", s["overshoot_pct"], g["overshoot_pct"],
                    abs_=1e-6)
        R.num_close(tally, L + node + " settle 1%", s["settle_s"]["1"], g["settle_1pct_s"],
                    rel=1e-7)
    key = [(i["overshoot_pct"] is None, i["overshoot_pct"] or 0, i["settle_1pct_s"])
           for i in d["injections"]]
    tally.check(key == sorted(key), L + "ranked by overshoot, then settling", repr(key))


def compare(path, args, exe, tally):
    net = R.parse_loop_file(path)
    to = args[args.index("--to") + 1]
    if "--from" in args:
        kind, name = "input", args[args.index("--from") + 1]
    else:
        kind, name = "inject", args[args.index("--inject") + 1]
    L = "%s [%s]: " % (os.path.basename(path), " ".join(args))
    ref = Resp(net, to, kind, name)
    proc = subprocess.run([exe, "response", path, "--json"] + args, capture_output=True,
                          timeout=120)
    want = 0 if ref.stable else 1
    tally.check(proc.returncode == want, L + "exit code",
                "expected %d, got %d: %s" % (want, proc.returncode,
                                             proc.stderr.decode(errors="replace")[:200]))
    try:
        d = json.loads(proc.stdout)
    except ValueError:
        tally.check(False, L + "json", proc.stdout[:200])
        return
    R.num_close(tally, L + "dc", ref.dc, d["dc"], rel=1e-9)
    R.num_close(tally, L + "H(inf)", ref.d, d["hinf"], abs_=1e-9 * max(abs(ref.dc), abs(ref.d)))
    R.match_sets(L + "poles", [z / TWO_PI for z in ref.poles], d["poles"], tally, rel=1e-7)
    R.match_sets(L + "zeros", [z / TWO_PI for z in ref.zeros], d["zeros"], tally, rel=1e-6)
    seen = [complex(p["re_hz"], p["im_hz"]) for p in d["poles"] if not p["seen"]]
    want = [ref.poles[k] / TWO_PI for k in ref.hidden]
    left = list(seen)
    for z in want:
        near = [g for g in left if abs(g - z) <= 1e-6 * abs(z)]
        if near:
            left.remove(near[0])
    tally.check(len(seen) == len(want) and not left,
                L + "poles H cannot see", "ref %s, reported %s" % (want, seen))
    # the table: |H| and the unwrapped phase from the anchor (numpy.unwrap
    # over a dense grid, the reference's own way)
    pts = d["points"]
    hz = np.array([p["hz"] for p in pts])
    dense = np.geomspace(hz[0] / 1e3, hz[-1], 12 * len(hz))
    hd = ref.Hs(1j * TWO_PI * dense)
    ph = np.degrees(np.unwrap(np.angle(hd)))
    # the anchor: 0 or -180 by the sign of K0 in H ~ K0 s^m, plus 90 m, with
    # m from the slope of |H| and the sign from H at a small real s
    f0 = dense[0]
    m = round(math.log10(abs(ref.H(1j * TWO_PI * f0)) / abs(ref.H(1j * TWO_PI * f0 / 10))))
    k0 = ref.H(TWO_PI * f0 / 100).real
    anchor = (0.0 if k0 > 0 else -180.0) + 90.0 * m
    ph += 360.0 * round((anchor - ph[0]) / 360.0)
    worst_m = worst_p = 0.0
    for p in pts:
        h = ref.H(1j * TWO_PI * p["hz"])
        if abs(h) == 0:
            continue
        worst_m = max(worst_m, abs(20 * math.log10(abs(h)) - p["db"]))
        k = int(np.argmin(np.abs(dense - p["hz"])))
        pr = math.degrees(math.atan2(h.imag, h.real))
        pr += 360.0 * round((ph[k] - pr) / 360.0)
        worst_p = max(worst_p, abs(pr - p["phase_deg"]))
    tally.check(worst_m < 1e-6, L + "table magnitude", "max err %.2e dB" % worst_m)
    tally.check(worst_p < 1e-6, L + "table phase (unwrapped)", "max err %.2e deg" % worst_p)
    # the peak: |H| at the reported frequency, and no larger |H| on a dense grid
    pk = d["peak"]
    dense = np.geomspace(d["fmin_hz"] / 10, d["fmax_hz"], 6000)
    mags = np.abs(ref.Hs(1j * TWO_PI * dense))
    top = max(mags.max(), abs(ref.dc))
    if pk["hz"] is None:
        tally.check(abs(pk["value"] - abs(ref.d)) <= 1e-9 * abs(ref.d) and
                    abs(ref.d) >= top * (1 - 1e-6), L + "peak at infinity",
                    "value %r, |H(inf)| %r, grid max %r" % (pk["value"], ref.d, top))
    else:
        hv = abs(ref.H(1j * TWO_PI * pk["hz"])) if pk["hz"] > 0 else abs(ref.dc)
        tally.check(abs(hv - pk["value"]) <= 1e-9 * hv and hv >= top * (1 - 1e-9),
                    L + "peak", "reported %r at %r Hz; |H| there %r; grid max %r"
                    % (pk["value"], pk["hz"], hv, top))
    # the largest hump of |H| at a finite frequency: |H| there, a local maximum
    # (|H| lower a little on each side), and no higher hump on the dense grid
    humps = [mags[k] for k in range(1, len(mags) - 1)
             if mags[k] > max(mags[k - 1], mags[k + 1]) * (1 + 1e-9)]
    lp = d["local_peak"]
    if lp is None:
        tally.check(not humps, L + "no local peak", "grid humps %r" % humps[:3])
    else:
        hv = abs(ref.H(1j * TWO_PI * lp["hz"]))
        side = max(abs(ref.H(1j * TWO_PI * lp["hz"] * f)) for f in (1 - 1e-3, 1 + 1e-3))
        tally.check(abs(hv - lp["value"]) <= 1e-9 * hv and hv >= side and
                    all(h <= hv * (1 + 1e-6) for h in humps), L + "local peak",
                    "reported %r at %r Hz; |H| there %r, beside %r; grid humps %r"
                    % (lp["value"], lp["hz"], hv, side, humps[:3]))
    bw = d["bandwidth_hz"]
    if bw is not None:
        hb = abs(ref.H(1j * TWO_PI * bw))
        below = mags[dense < bw * (1 - 1e-6)]
        tally.check(abs(hb / abs(ref.dc) - 1 / math.sqrt(2)) < 1e-9 and
                    (below > abs(ref.dc) / math.sqrt(2) * (1 - 1e-9)).all(),
                    L + "bandwidth", "|H(bw)|/|H(0)| = %r" % (hb / abs(ref.dc)))
    if not ref.stable:
        tally.check(d["step"] is None, L + "no step when unstable", repr(d["step"])[:100])
        return
    s, got = ref.step(), d["step"]
    if not tally.check(got is not None, L + "step present"):
        return
    scale = max(abs(s["final"]), abs(s["peak_value"]))
    # amp: how far the peak stands above the final value. Both sides know y(t)
    # to about 1e-9 of its peak, so the figures measured against the final
    # value (the overshoot in percent of it, the times at 10%, 90% and the
    # settling bands) are known to that much less: 1 for an ordinary step,
    # about 100 for an output impedance whose DC value is a hundredth of
    # its peak (tests/ref/resp/wide_span.loop)
    amp = scale / abs(s["final"]) if s["final"] != 0 else 1.0
    for key in ("initial", "final", "peak_value"):
        R.num_close(tally, L + "step " + key, s[key], got[key], abs_=1e-9 * scale)
    for key in ("overshoot_pct", "undershoot_pct"):
        R.num_close(tally, L + "step " + key, s[key], got[key], abs_=1e-6 * amp)
    for key in ("peak_time_s", "rise_time_s"):
        if s[key] is None or got[key] is None:
            tally.check(s[key] is None and got[key] is None, L + "step " + key,
                        "ref %r, reported %r" % (s[key], got[key]))
        else:
            R.num_close(tally, L + "step " + key, s[key], got[key], rel=1e-7 * amp)
    for key in ("1", "0.1"):
        R.num_close(tally, L + "step settle " + key + "%", s["settle_s"][key],
                    got["settle_s"][key], rel=1e-7 * amp)
    sm, gm = s["slow_mode"], got["slow_mode"]
    if sm is None or gm is None:
        tally.check(sm is None and gm is None, L + "slow mode", "ref %r, got %r" % (sm, gm))
    else:
        p = complex(gm["re_hz"], gm["im_hz"]) * TWO_PI
        tally.check(abs(p - sm[0]) <= 1e-7 * abs(sm[0]) and
                    abs(gm["amplitude"] - sm[1]) <= 1e-6 * sm[1], L + "slow mode",
                    "ref %s amp %.6g, got %s amp %.6g" % (sm[0], sm[1], p, gm["amplitude"]))


def main(argv):
    if "--selftest" in argv:
        return selftest()
    exe = os.environ.get("LOOPWISE", "./loopwise")
    files = [a for a in argv[1:] if a.endswith(".loop")]
    if not files:
        d = os.path.join(HERE, "resp")
        files = sorted(os.path.join(d, f) for f in os.listdir(d) if f.endswith(".loop"))
    tally = R.Tally()
    for path in files:
        for args in directives(path):
            compare(path, args, exe, tally)
    if not [a for a in argv[1:] if a.endswith(".loop")]:
        cases = os.path.join(HERE, "..", "..", "cases")
        for name, args in CASES:
            path = os.path.join(cases, name)
            if "each" in args:
                compare_each(path, args.split()[1], exe, tally)
            else:
                compare(path, args.split(), exe, tally)
        for k in (0, 5, 13):
            compare_each(os.path.join(HERE, "resp", "gen%02d.loop" % k), "a1", exe, tally)
    print("%d passed, %d failed" % (tally.passed, tally.failed))
    return 1 if tally.failed else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
