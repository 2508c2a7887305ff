#!/usr/bin/python3
"""Independent reference check for loopwise, written from SPEC sections 1, 2, 4.

Run with Debian's interpreter (it carries numpy and scipy):

    /usr/bin/python3 tests/ref/numpy_ref.py --selftest
    LOOPWISE=./loopwise /usr/bin/python3 tests/ref/numpy_ref.py [FILE.loop ...]

With no files, every tests/ref/nets/*.loop and tests/ref/extreme/*.loop is
checked.  Each check prints one line; the last line is "N passed, M failed"
and the exit status is 1 when any check failed.

The networks in extreme/ stress the numerics (values over 33 decades, DC
gains of 1e9, near-singular G, doublets, integrators, right-half-plane and
conditionally stable loops).  For them double-precision scipy is only the
starting point: the true answer is decided in exact rational arithmetic
(class Truth: det polynomials over fractions.Fraction, roots polished by
exactly evaluated Newton steps, stability by an exact Routh array, T(jw) and
the margins on the exact rational T), and an INFO line says how far scipy
was from it.  Their '#%' header lines set per-network tolerances, the
expected accuracy_warning, and known issues (see read_directives).  When
loopwise sets accuracy_warning, a number outside its tolerance prints as
WARNED (the report said not to trust it); a known issue prints as KNOWN;
neither counts as failed.

The reference uses only dense linear algebra (numpy/scipy), none of the C
code's numerics: poles and zeros come from generalized eigenvalues, T(jw) from
one linear solve per frequency, the phase from numpy.unwrap over a dense,
adaptively refined grid, crossovers from brentq.  --selftest checks this
reference against closed forms and against exact rational polynomials
(fractions.Fraction) built from the same networks.
"""

import cmath
import glob
import json
import math
import os
import subprocess
import sys
import tempfile
from fractions import Fraction

import numpy as np
import scipy.linalg as sla
from scipy.optimize import brentq, linear_sum_assignment

TWO_PI = 2.0 * math.pi
HERE = os.path.dirname(os.path.abspath(__file__))


# --------------------------------------------------------------------------
# Parser for the subset of the .loop format used by the reference networks
# --------------------------------------------------------------------------

class LoopError(Exception):
    pass


KEYWORDS = {"param", "node", "input", "res", "cap", "gm", "loop", "break"}
FUNCS1 = {"sqrt": math.sqrt, "exp": math.exp, "ln": math.log,
          "log10": math.log10, "abs": abs}
FUNCS2 = {"min": min, "max": max}
RESERVED = KEYWORDS | {"gnd", "inf", "pi"} | set(FUNCS1) | set(FUNCS2)
PREFIX = {"f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, "\u00b5": 1e-6,
          "\u03bc": 1e-6, "m": 1e-3, "k": 1e3, "M": 1e6, "G": 1e9, "T": 1e12}
UNITS = {"F", "S", "ohm", "\u03a9", "\u2126"}
SUFFIX_CHARS = set("abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ"
                   "\u00b5\u03bc\u03a9\u2126")


def is_name(t):
    if not t or not (t[0].isascii() and (t[0].isalpha() or t[0] == "_")):
        return False
    return all(ch.isascii() and (ch.isalnum() or ch == "_") for ch in t)


def tokenize_expr(text):
    """Tokens: ('num', value), ('id', name), ('op', ch)."""
    toks = []
    i, n = 0, len(text)
    while i < n:
        ch = text[i]
        if ch.isspace():
            i += 1
            continue
        if ch.isdigit() or (ch == "." and i + 1 < n and text[i + 1].isdigit()):
            j = i
            while j < n and text[j].isdigit():
                j += 1
            if j < n and text[j] == ".":
                j += 1
                while j < n and text[j].isdigit():
                    j += 1
            if j < n and text[j] in "eE":
                k = j + 1
                if k < n and text[k] in "+-":
                    k += 1
                if k < n and text[k].isdigit():
                    while k < n and text[k].isdigit():
                        k += 1
                    j = k
            mant = float(text[i:j])
            k = j
            while k < n and text[k] in SUFFIX_CHARS:
                k += 1
            suf = text[j:k]
            scale = 1.0
            if suf == "" or suf in UNITS:
                scale = 1.0
            elif suf[0] in PREFIX and (suf[1:] == "" or suf[1:] in UNITS):
                scale = PREFIX[suf[0]]
            else:
                raise LoopError("unknown suffix %r in %r" % (suf, text))
            toks.append(("num", mant * scale))
            i = k
            continue
        if ch.isalpha() or ch == "_":
            j = i
            while j < n and (text[j].isalnum() or text[j] == "_"):
                j += 1
            toks.append(("id", text[i:j]))
            i = j
            continue
        if ch in "+-*/^(),":
            toks.append(("op", ch))
            i += 1
            continue
        raise LoopError("unexpected character %r in %r" % (ch, text))
    return toks


class ExprParser:
    """Recursive descent.

    expr    -> term { ('+'|'-') term }
    term    -> unary { ('*'|'/') unary }
    unary   -> ('-'|'+') unary | power
    power   -> primary [ '^' unary ]        (right-associative, binds tightest)
    primary -> NUMBER | NAME | FUNC '(' expr [',' expr] ')' | '(' expr ')'
    """

    def __init__(self, text, params):
        self.toks = tokenize_expr(text)
        self.pos = 0
        self.params = params
        self.text = text

    def peek(self):
        return self.toks[self.pos] if self.pos < len(self.toks) else (None, None)

    def take(self):
        t = self.peek()
        self.pos += 1
        return t

    def expect(self, op):
        t = self.take()
        if t != ("op", op):
            raise LoopError("expected %r in %r" % (op, self.text))

    def parse(self):
        v = self.expr()
        if self.pos != len(self.toks):
            raise LoopError("trailing tokens in %r" % self.text)
        return v

    def expr(self):
        v = self.term()
        while self.peek() in (("op", "+"), ("op", "-")):
            op = self.take()[1]
            w = self.term()
            v = v + w if op == "+" else v - w
        return v

    def term(self):
        v = self.unary()
        while self.peek() in (("op", "*"), ("op", "/")):
            op = self.take()[1]
            w = self.unary()
            if op == "*":
                v = v * w
            else:
                if w == 0:
                    raise LoopError("division by zero in %r" % self.text)
                v = v / w
        return v

    def unary(self):
        t = self.peek()
        if t == ("op", "-"):
            self.take()
            return -self.unary()
        if t == ("op", "+"):
            self.take()
            return self.unary()
        return self.power()

    def power(self):
        base = self.primary()
        if self.peek() == ("op", "^"):
            self.take()
            return base ** self.unary()
        return base

    def primary(self):
        kind, val = self.take()
        if kind == "num":
            return val
        if kind == "op" and val == "(":
            v = self.expr()
            self.expect(")")
            return v
        if kind == "id":
            if val == "pi":
                return math.pi
            if val == "inf":
                return math.inf
            if val in FUNCS1 or val in FUNCS2:
                self.expect("(")
                a = self.expr()
                if val in FUNCS2:
                    self.expect(",")
                    b = self.expr()
                    self.expect(")")
                    return FUNCS2[val](a, b)
                self.expect(")")
                return FUNCS1[val](a)
            if val in self.params:
                return self.params[val]
            raise LoopError("unknown name %r in %r" % (val, self.text))
        raise LoopError("bad expression %r" % self.text)


def eval_expr(text, params):
    return ExprParser(text, params).parse()


class Net:
    """What a .loop file declares; node index = declaration order."""

    def __init__(self):
        self.params = {}
        self.nodes = []          # names
        self.node_r = []         # float (inf allowed)
        self.node_c = []
        self.elems = []          # (kind, name, a, b, value); gm: a=IN, b=OUT
        self.loops = []          # (name, sign, [nodes])
        self.brk = None
        self.names = set()
        self.inputs = []         # SPEC section 6: driven nodes, AC ground for the loop

    def idx(self, name):
        if name == "gnd" or name in self.inputs:
            return -1
        return self.nodes.index(name)

    def elem(self, name):
        for e in self.elems:
            if e[1] == name:
                return e
        raise LoopError("unknown element %r" % name)


def parse_loop_text(text):
    net = Net()
    if text.startswith("\ufeff"):
        text = text[1:]
    for lineno, raw in enumerate(text.replace("\r\n", "\n").split("\n"), 1):
        line = raw.split("#", 1)[0].strip()
        if not line:
            continue
        parts = line.split()
        kw = parts[0]

        def newname(nm):
            if not is_name(nm) or nm in RESERVED:
                raise LoopError("line %d: bad name %r" % (lineno, nm))
            if nm in net.names:
                raise LoopError("line %d: duplicate name %r" % (lineno, nm))
            net.names.add(nm)

        def node_ref(nm, allow_gnd=False):
            if (nm == "gnd" or nm in net.inputs) and allow_gnd:
                return nm
            if nm not in net.nodes:
                raise LoopError("line %d: unknown node %r" % (lineno, nm))
            return nm

        if kw == "param":
            rest = line[len("param"):].strip()
            if "=" not in rest:
                raise LoopError("line %d: param needs '='" % lineno)
            nm, ex = rest.split("=", 1)
            nm = nm.strip()
            newname(nm)
            net.params[nm] = eval_expr(ex.strip(), net.params)
        elif kw == "node":
            nm = parts[1]
            newname(nm)
            r, c = math.inf, 0.0
            for f in parts[2:]:
                if f.startswith("r="):
                    r = eval_expr(f[2:], net.params)
                elif f.startswith("c="):
                    c = eval_expr(f[2:], net.params)
                else:
                    raise LoopError("line %d: bad node field %r" % (lineno, f))
            if not (r > 0) or not (c >= 0) or math.isinf(c):
                raise LoopError("line %d: bad node value" % lineno)
            net.nodes.append(nm)
            net.node_r.append(r)
            net.node_c.append(c)
        elif kw in ("res", "cap"):
            nm = parts[1]
            newname(nm)
            a = node_ref(parts[2], allow_gnd=True)
            b = node_ref(parts[3], allow_gnd=True)
            if net.idx(a) < 0:
                a, b = b, a
            if net.idx(a) < 0:
                raise LoopError("line %d: %s joins no node" % (lineno, nm))
            head = line.split(None, 4)
            v = eval_expr(head[4], net.params)
            if not (v > 0) or math.isinf(v):
                raise LoopError("line %d: bad %s value" % (lineno, kw))
            net.elems.append((kw, nm, a, b, v))
        elif kw == "gm":
            nm = parts[1]
            newname(nm)
            if len(parts) < 6 or parts[3] != "->":
                raise LoopError("line %d: gm NAME IN -> OUT VALUE" % lineno)
            a = node_ref(parts[2], allow_gnd=parts[2] != "gnd")
            b = node_ref(parts[4])
            head = line.split(None, 5)
            v = eval_expr(head[5], net.params)
            if math.isinf(v) or math.isnan(v):
                raise LoopError("line %d: bad gm value" % lineno)
            net.elems.append(("gm", nm, a, b, v))
        elif kw == "input":
            nm = parts[1]
            newname(nm)
            if len(parts) != 2:
                raise LoopError("line %d: input takes a name only" % lineno)
            net.inputs.append(nm)
        elif kw == "loop":
            nm = parts[1]
            newname(nm)
            sign = parts[2]
            if sign not in ("negative", "positive"):
                raise LoopError("line %d: loop sign" % lineno)
            nodes = [node_ref(x) for x in parts[3:]]
            net.loops.append((nm, sign, nodes))
        elif kw == "break":
            if parts[1] in net.nodes:
                # break NODE (SPEC 1): every gm controlled by the node
                if not any(e[0] == "gm" and e[2] == parts[1] for e in net.elems):
                    raise LoopError("line %d: node controls no gm" % lineno)
            elif net.elem(parts[1])[0] != "gm":
                raise LoopError("line %d: break must name a gm or a node" % lineno)
            net.brk = parts[1]
        else:
            raise LoopError("line %d: unknown keyword %r" % (lineno, kw))
    if net.brk is None:
        raise LoopError("reference networks carry an explicit break line")
    return net


def break_plan(net):
    """SPEC 1, "Break": (i, b, g, off): T(s) = -g e_i^T Y0(s)^-1 b with Y0 =
    Y with the gms in `off` switched off.  A gm break is b = e_OUT and g its
    value; a node break N takes every gm whose IN is N together: i = N,
    b = the sum of g e_OUT over them, g = 1."""
    n = len(net.nodes)
    b = np.zeros(n)
    if net.brk in net.nodes:
        gms = [e for e in net.elems if e[0] == "gm" and e[2] == net.brk]
        for e in gms:
            b[net.idx(e[3])] += e[4]
        return net.idx(net.brk), b, 1.0, {e[1] for e in gms}
    kind, nm, a, bb, g = net.elem(net.brk)
    b[net.idx(bb)] = 1.0
    return net.idx(a), b, g, {nm}


def parse_loop_file(path):
    with open(path, encoding="utf-8") as fh:
        return parse_loop_text(fh.read())


# --------------------------------------------------------------------------
# Numeric model (SPEC section 1)
# --------------------------------------------------------------------------

def build(net, off=()):
    """G, C with every gm named in `off` switched off (value 0)."""
    n = len(net.nodes)
    G = np.zeros((n, n))
    C = np.zeros((n, n))
    for k in range(n):
        if not math.isinf(net.node_r[k]):
            G[k, k] += 1.0 / net.node_r[k]
        C[k, k] += net.node_c[k]
    for kind, nm, a, b, v in net.elems:
        ia, ib = net.idx(a), net.idx(b)
        if kind in ("res", "cap"):
            M, y = (G, 1.0 / v) if kind == "res" else (C, v)
            M[ia, ia] += y
            if ib >= 0:
                M[ib, ib] += y
                M[ia, ib] -= y
                M[ib, ia] -= y
        elif kind == "gm":
            if nm in off or ia < 0:
                continue            # off, or driven by an input (AC ground)
            G[ib, ia] -= v          # current v*v(IN) flows INTO OUT
    return G, C


def gen_eig(A, B, left=False):
    """Finite generalized eigenvalues of A x = lambda B x (and vectors)."""
    if left:
        w, vl, vr = sla.eig(A, B, left=True, right=True,
                            homogeneous_eigvals=True)
    else:
        w, vr = sla.eig(A, B, left=False, right=True,
                        homogeneous_eigvals=True)
        vl = None
    alpha, beta = w[0], w[1]
    nA = np.linalg.norm(A, 1) or 1.0
    nB = np.linalg.norm(B, 1) or 1.0
    keep = []
    for j in range(len(alpha)):
        if beta[j] == 0:
            continue
        if abs(beta[j]) / nB > 1e-11 * abs(alpha[j]) / nA:
            keep.append(j)
    lam = np.array([alpha[j] / beta[j] for j in keep], dtype=complex)
    return lam, keep, vl, vr


def clean(z):
    """Exact conjugate pairs come out of QZ with a tiny imaginary residue on
    real eigenvalues; keep the value as it is (no rounding of real parts)."""
    return complex(z)


class Ref:
    """Reference answers for one network (all frequencies in rad/s inside)."""

    def __init__(self, net, margins=True):
        self.net = net
        n = len(net.nodes)
        self.n = n
        self.i, self.e_o, self.g, off = break_plan(net)
        self.G, self.C = build(net)
        self.G0, _ = build(net, off=off)

        lam, keep, vl, vr = gen_eig(-self.G0, self.C, left=True)
        self.ol = [clean(z) for z in lam]
        self.ol_owner = []
        self.ol_pf_ratio = []
        for j in keep:
            r = vr[:, j]
            l = vl[:, j]
            pf = np.abs(np.conj(l) * (self.C @ r))
            order = np.argsort(-pf)
            self.ol_owner.append(net.nodes[order[0]])
            second = pf[order[1]] if n > 1 else 0.0
            self.ol_pf_ratio.append(pf[order[0]] / second if second > 0
                                    else math.inf)
        self.cl = [clean(z) for z in gen_eig(-self.G, self.C)[0]]
        self.zeros_all, self.zeros = self._zeros()
        self.T0 = self._dc()
        if margins:              # else attach_truth() does it, exactly
            self._band()
            self._margins()

    # T(s) = -g [Y0(s)^-1]_(i,o), or -e_i^T Y0(s)^-1 b for a node break
    def T(self, s):
        Y = self.G0 + s * self.C
        x = np.linalg.solve(Y.astype(complex), self.e_o.astype(complex))
        return -self.g * x[self.i]

    def T_many(self, s):
        s = np.asarray(s, dtype=complex)
        Y = self.G0[None, :, :] + s[:, None, None] * self.C[None, :, :]
        rhs = np.broadcast_to(self.e_o.astype(complex), (len(s), self.n))
        x = np.linalg.solve(Y, rhs[:, :, None])[:, :, 0]
        return -self.g * x[:, self.i]

    def _dc(self):
        try:
            if abs(np.linalg.det(self.G0)) == 0:
                return math.inf
            x = np.linalg.solve(self.G0, self.e_o)
        except np.linalg.LinAlgError:
            return math.inf
        return float(-self.g * x[self.i])

    def _zeros(self):
        n = self.n
        A = np.zeros((n + 1, n + 1))
        B = np.zeros((n + 1, n + 1))
        A[:n, :n] = self.G0
        A[:n, n] = self.e_o
        A[n, self.i] = 1.0
        B[:n, :n] = self.C
        cand = gen_eig(-A, B)[0]
        good = []
        for z in cand:
            if self._zero_verified(z):
                good.append(clean(z))
        return list(cand), good

    def _zero_verified(self, z):
        scale = abs(z)
        if scale == 0:
            scale = 1.0
        rad = 1e-3 * scale
        try:
            tz = abs(self.T(z))
            ring = [abs(self.T(z + rad * cmath.exp(1j * th)))
                    for th in np.linspace(0, 2 * math.pi, 8, endpoint=False)]
        except np.linalg.LinAlgError:
            return False
        ref = float(np.median(ring))
        if not np.isfinite(tz) or ref == 0 or not np.isfinite(ref):
            return False
        return tz < 1e-5 * ref

    def _band(self):
        mags = [abs(z) / TWO_PI for z in self.ol + self.zeros + self.cl]
        if getattr(self, "truth", None) is not None:
            # exact roots: those at s = 0 are exactly 0
            mags = [m for m in mags if m > 0]
        else:
            big = max([abs(z) / TWO_PI for z in self.ol + self.zeros] or [0])
            mags = [m for m in mags if m > 1e-9 * big]
        if mags:
            self.fmin, self.fmax = min(mags) / 1000.0, max(mags) * 1000.0
        else:
            self.fmin, self.fmax = 1.0, 1e9

    def anchor(self):
        big = max([abs(z) for z in self.ol + self.zeros] or [0.0])
        p0 = sum(1 for z in self.ol if abs(z) <= 1e-9 * big)
        z0 = sum(1 for z in self.zeros if abs(z) <= 1e-9 * big)
        if getattr(self, "truth", None) is not None:
            p0, z0 = max(0, -self.truth.origin), max(0, self.truth.origin)
        t0 = self.T0
        base = 0.0 if (math.isinf(t0) or t0 > 0) else -180.0
        if math.isinf(t0) or t0 == 0:
            # SPEC: the sign of the lowest-order nonzero term of T at s -> 0
            base = 0.0 if self.low_sign() > 0 else -180.0
        return base - 90.0 * (p0 - z0)

    def low_sign(self):
        """Sign of the lowest-order term of T at s -> 0: from T on the
        positive real axis far below every nonzero pole and zero (the exact
        truth of an extreme network sets it from the polynomials instead)."""
        if getattr(self, "lowsign", None) is not None:
            return self.lowsign
        mags = [abs(z) for z in self.ol + self.zeros if abs(z) > 0]
        sig = 1e-4 * min(mags) if mags else 1.0
        return 1 if self.T(sig).real > 0 else -1

    def phase_profile(self, extra=()):
        """Dense grid (Hz) from well below the band to its top, with the
        unwrapped phase in degrees, anchored at low frequency."""
        lo = min([self.fmin] + list(extra)) * 1e-3
        hi = max([self.fmax] + list(extra)) * 1.01
        dec = math.log10(hi / lo)
        f = list(np.logspace(math.log10(lo), math.log10(hi),
                             int(dec * 400) + 2))
        # lightly damped poles and zeros: resolve their phase swing
        for z in self.ol + self.zeros + self.cl:
            m = abs(z)
            if m == 0:
                continue
            zeta = abs(z.real) / m
            if zeta < 0.2:
                w = max(zeta, 1e-6) * 30
                f += list(np.linspace(max(m * (1 - w), m * 1e-3), m * (1 + w),
                                      3001) / TWO_PI)
        f += list(extra)
        f = np.unique(np.array([x for x in f if x > 0]))
        for _ in range(40):
            t = self.T_many(1j * TWO_PI * f)
            d = np.angle(t[1:] / t[:-1], deg=True)
            bad = np.nonzero(np.abs(d) > 2.0)[0]
            if len(bad) == 0:
                break
            mids = np.sqrt(f[bad] * f[bad + 1])
            f = np.unique(np.concatenate([f, mids]))
        else:
            raise RuntimeError("phase grid did not converge")
        ph = np.degrees(np.unwrap(np.angle(t)))
        k = round((self.anchor() - ph[0]) / 360.0)
        ph = ph + 360.0 * k
        if abs(ph[0] - self.anchor()) > 5.0:
            raise RuntimeError("phase at the bottom of the grid is %.3f, "
                               "anchor %.1f" % (ph[0], self.anchor()))
        return f, t, ph

    def _margins(self):
        f, t, ph = self.phase_profile()
        self.grid = (f, t, ph)
        sel = (f >= self.fmin * (1 - 1e-12)) & (f <= self.fmax * (1 + 1e-12))
        idx = np.nonzero(sel)[0]
        lf = np.log10(f)

        def logmag(x):
            return math.log(abs(self.T(1j * TWO_PI * 10.0 ** x)))

        def phase_local(x, k):
            tv = self.T(1j * TWO_PI * 10.0 ** x)
            return ph[k] + math.degrees(cmath.phase(tv / t[k]))

        self.crossovers = []
        lm = np.log(np.abs(t))
        for a, b in zip(idx[:-1], idx[1:]):
            if lm[a] == 0:
                fc = f[a]
            elif lm[a] * lm[b] < 0:
                xc = brentq(logmag, lf[a], lf[b], xtol=1e-15, rtol=1e-15,
                            maxiter=200)
                fc = 10.0 ** xc
            else:
                continue
            pm = 180.0 + phase_local(math.log10(fc), a)
            self.crossovers.append((fc, pm))
        if self.crossovers:
            self.crossover_hz, self.pm = min(self.crossovers,
                                             key=lambda c: c[1])
        else:
            self.crossover_hz, self.pm = None, None

        self.phase_crossings = []
        for a, b in zip(idx[:-1], idx[1:]):
            ua, ub = (ph[a] + 180.0) / 360.0, (ph[b] + 180.0) / 360.0
            lo_, hi_ = min(ua, ub), max(ua, ub)
            # integers m in (lo_, hi_]: target phase -180 + 360 m
            for m in range(math.floor(lo_) + 1, math.floor(hi_) + 1):
                target = -180.0 + 360.0 * m
                fp = 10.0 ** brentq(lambda x: phase_local(x, a) - target,
                                    lf[a], lf[b], xtol=1e-15, rtol=1e-15,
                                    maxiter=200)
                gm = -20.0 * math.log10(abs(self.T(1j * TWO_PI * fp)))
                self.phase_crossings.append((fp, gm))
        if math.isfinite(self.T0) and self.T0 < 0:
            # SPEC 1: the gain margin counts at every frequency where the phase
            # is -180 + 360 m; with T(0) finite and negative that is f = 0
            # itself, where a gain 1/|T(0)| higher puts a closed-loop pole at 0
            self.phase_crossings.insert(0, (0.0, -20.0 * math.log10(-self.T0)))
        if self.phase_crossings:
            self.phase_crossover_hz, self.gm = min(self.phase_crossings,
                                                   key=lambda c: c[1])
        else:
            self.phase_crossover_hz, self.gm = None, None
        self.stable = all(z.real < 0 for z in self.cl)

    def loop_own_gains(self):
        """SPEC 'Declared loops': own DC gain of every declared loop."""
        truth = getattr(self, "truth", None)
        if truth is not None:
            return truth.loop_own_gains()
        net = self.net
        out = []
        for name, sign, off_, pg in self.loop_plan():
            if pg is None:
                out.append((name, sign, None))
                continue
            e = net.elem(pg)
            G0, _ = build(net, off=off_ | {pg})
            i, o = net.idx(e[2]), net.idx(e[3])
            eo = np.zeros(self.n)
            eo[o] = 1.0
            x = np.linalg.solve(G0, eo)
            out.append((name, sign, float(-e[4] * x[i])))
        return out

    def loop_plan(self):
        """For every declared loop: (name, sign, gms switched off, the
        private gm its own gain is measured at, or None)."""
        net = self.net
        hops = []
        for name, sign, nodes in net.loops:
            h = []
            for j, a in enumerate(nodes):
                b = nodes[(j + 1) % len(nodes)]
                gms = [e[1] for e in net.elems
                       if e[0] == "gm" and e[2] == a and e[3] == b]
                h.append(gms)
            hops.append(h)
        out = []
        for k, (name, sign, nodes) in enumerate(net.loops):
            others = set()
            for j, h in enumerate(hops):
                if j != k:
                    for gms in h:
                        others.update(gms)
            mine = [g for gms in hops[k] for g in gms]
            private = [g for g in mine if g not in others]
            if not private:
                out.append((name, sign, set(), None))
                continue
            pg = private[0]
            off_ = set()
            for j, h in enumerate(hops):
                if j != k:
                    for gms in h:
                        off_.update(x for x in gms if x not in mine)
            out.append((name, sign, off_, pg))
        return out

    def estimate_hz(self, node):
        k = self.net.nodes.index(node)
        r = self.net.node_r[k]
        ct = self.net.node_c[k]
        for kind, nm, a, b, v in self.net.elems:
            if kind == "cap" and b == "gnd" and a == node:
                ct += v
        if math.isinf(r) or ct == 0:
            return None
        return 1.0 / (TWO_PI * r * ct)


# --------------------------------------------------------------------------
# Exact rational polynomials (used by --selftest only)
# --------------------------------------------------------------------------

def fdet(M):
    """Exact determinant by Gaussian elimination over Fractions."""
    M = [row[:] for row in M]
    n = len(M)
    det = Fraction(1)
    for c in range(n):
        p = next((r for r in range(c, n) if M[r][c] != 0), None)
        if p is None:
            return Fraction(0)
        if p != c:
            M[c], M[p] = M[p], M[c]
            det = -det
        det *= M[c][c]
        for r in range(c + 1, n):
            if M[r][c] != 0:
                q = M[r][c] / M[c][c]
                for k in range(c, n):
                    M[r][k] -= q * M[c][k]
    return det


def det_poly(A, B, deg):
    """Coefficients (low to high) of det(A + s B), exact, by interpolation."""
    pts = list(range(deg + 1))
    vals = []
    for s in pts:
        M = [[A[r][c] + s * B[r][c] for c in range(len(A))]
             for r in range(len(A))]
        vals.append(fdet(M))
    # solve the Vandermonde system exactly
    V = [[Fraction(s) ** k for k in range(deg + 1)] + [v]
         for s, v in zip(pts, vals)]
    m = deg + 1
    for c in range(m):
        p = next(r for r in range(c, m) if V[r][c] != 0)
        V[c], V[p] = V[p], V[c]
        for r in range(m):
            if r != c and V[r][c] != 0:
                q = V[r][c] / V[c][c]
                for k in range(c, m + 1):
                    V[r][k] -= q * V[c][k]
    coef = [V[k][m] / V[k][k] for k in range(m)]
    while len(coef) > 1 and coef[-1] == 0:
        coef.pop()
    return coef


def pdeg(p):
    return len(p) - 1 if any(c != 0 for c in p) else -1


def ptrim(p):
    p = list(p)
    while len(p) > 1 and p[-1] == 0:
        p.pop()
    return p or [Fraction(0)]


def pdivmod(a, b):
    """Exact polynomial division (coefficients low to high)."""
    a, b = ptrim(a), ptrim(b)
    db = pdeg(b)
    q = [Fraction(0)] * max(len(a) - db, 1)
    while pdeg(a) >= db:
        d = pdeg(a) - db
        f = a[-1] / b[-1]
        q[d] = f
        for k in range(db + 1):
            a[k + d] -= f * b[k]
        a[-1] = Fraction(0)          # exact cancellation of the leading term
        a = ptrim(a)
        if pdeg(a) < 0:
            break
    return q, a


def pgcd(a, b):
    while pdeg(b) >= 0:
        _, r = pdivmod(a, b)
        a, b = b, r
    return a


def cpoly_eval(p, z):
    """Exact evaluation of a Fraction polynomial at a complex rational z=(x,y)."""
    x, y = z
    re, im = Fraction(0), Fraction(0)
    dre, dim = Fraction(0), Fraction(0)
    for c in reversed(p):
        # derivative first (Horner on p and p')
        dre, dim = dre * x - dim * y + re, dre * y + dim * x + im
        re, im = re * x - im * y + c, re * y + im * x
    return (re, im), (dre, dim)


def polish_root(p, z0, iters=30):
    """Newton on the exact polynomial, every step evaluated exactly."""
    z = complex(z0)
    for _ in range(iters):
        (a, b), (c, d) = cpoly_eval(p, (Fraction(z.real), Fraction(z.imag)))
        den = c * c + d * d
        if den == 0:
            return z
        dz = complex(float((a * c + b * d) / den), float((b * c - a * d) / den))
        zn = z - dz
        if zn == z or abs(dz) <= 1e-17 * abs(z):
            return zn
        z = zn
    return z


def build_exact(net, off=()):
    """Same stamps as build(), in exact rational arithmetic."""
    n = len(net.nodes)
    Z = Fraction(0)
    G = [[Z] * n for _ in range(n)]
    C = [[Z] * n for _ in range(n)]
    for k in range(n):
        if not math.isinf(net.node_r[k]):
            G[k][k] += 1 / Fraction(net.node_r[k])
        C[k][k] += Fraction(net.node_c[k])
    for kind, nm, a, b, v in net.elems:
        ia, ib = net.idx(a), net.idx(b)
        if kind in ("res", "cap"):
            M, y = (G, 1 / Fraction(v)) if kind == "res" else (C, Fraction(v))
            M[ia][ia] += y
            if ib >= 0:
                M[ib][ib] += y
                M[ia][ib] -= y
                M[ib][ia] -= y
        elif kind == "gm" and nm not in off:
            G[ib][ia] -= Fraction(v)
    return G, C


def exact_model(net):
    """Exact D0 = det Y0, N = det bordered, Dcl = det Y, and g."""
    n = len(net.nodes)
    Gx, B = build_exact(net)
    i, bvec, g, off = break_plan(net)
    A, _ = build_exact(net, off=off)
    Ab = [row[:] + [Fraction(0)] for row in A] + [[Fraction(0)] * (n + 1)]
    Bb = [row[:] + [Fraction(0)] for row in B] + [[Fraction(0)] * (n + 1)]
    for k in range(n):
        Ab[k][n] = Fraction(float(bvec[k]))
    Ab[n][i] = Fraction(1)
    D0 = det_poly(A, B, n)
    N = det_poly(Ab, Bb, n + 1)
    Dcl = det_poly(Gx, B, n)
    return D0, N, Dcl, Fraction(float(g))


# --------------------------------------------------------------------------
# Exact truth for the extreme networks (tests/ref/extreme/)
# --------------------------------------------------------------------------
#
# Where double precision is not to be trusted (values over 33 decades, a near
# singular G, doublets, a DC gain of 1e9), the true answer is decided in exact
# rational arithmetic: D0 = det Y0(s), N = det of the bordered matrix and
# Dcl = det Y(s) as Fraction polynomials (T = g N / D0), every root polished by
# Newton steps evaluated exactly, stability from an exact Routh array, T(jw)
# as the exact ratio at the rational frequency nearest to w, and the
# crossovers and phase crossings refined by brentq on that exact T.  scipy's
# answers serve only as starting points; how far they were off is printed as
# INFO lines.

def fsolve_entry(A, i, o):
    """[A^-1]_(i,o) in exact arithmetic, or None when A is singular."""
    n = len(A)
    M = [row[:] + [Fraction(1 if r == o else 0)] for r, row in enumerate(A)]
    for c in range(n):
        p = next((r for r in range(c, n) if M[r][c] != 0), None)
        if p is None:
            return None
        M[c], M[p] = M[p], M[c]
        for r in range(n):
            if r != c and M[r][c] != 0:
                q = M[r][c] / M[c][c]
                for k in range(c, n + 1):
                    M[r][k] -= q * M[c][k]
    return M[i][n] / M[i][i]


def low_order(p):
    """Index of the lowest nonzero coefficient."""
    return next(k for k, c in enumerate(p) if c != 0)


def rhp_count(p):
    """(roots with Re > 0, roots exactly at s = 0) of the exact real
    polynomial p (low to high), from the Routh array; None when a zero pivot
    (a root pair on the imaginary axis, say) makes the plain array
    inapplicable."""
    p = ptrim(p)
    k0 = 0
    while len(p) > 1 and p[0] == 0:
        p = p[1:]
        k0 += 1
    a = list(reversed(p))            # high to low
    n = len(a) - 1
    if n <= 0:
        return 0, k0
    w = (n + 2) // 2 + 1
    r1 = a[0::2] + [Fraction(0)] * (w - len(a[0::2]))
    r2 = a[1::2] + [Fraction(0)] * (w - len(a[1::2]))
    first = [r1[0], r2[0]]
    for _ in range(n - 1):
        if r2[0] == 0:
            return None
        r3 = [(r2[0] * r1[j + 1] - r1[0] * r2[j + 1]) / r2[0]
              for j in range(w - 1)] + [Fraction(0)]
        r1, r2 = r2, r3
        first.append(r2[0])
    if any(x == 0 for x in first):
        return None
    changes = sum(1 for x, y in zip(first, first[1:]) if (x > 0) != (y > 0))
    return changes, k0


def peval(p, s):
    """Exact value of p at the complex rational s = (x, y)."""
    return cpoly_eval(p, s)[0]


class TruthError(Exception):
    pass


class Truth:
    """The exact answers for one network, started from a Ref's numbers."""

    def __init__(self, ref):
        self.ref = ref
        net = ref.net
        self.D0, self.N, self.Dcl, self.g = exact_model(net)
        m = max(len(self.D0), len(self.N), len(self.Dcl))
        pad = lambda p: list(p) + [Fraction(0)] * (m - len(p))
        if pad(self.Dcl) != [a + self.g * b for a, b in zip(pad(self.D0),
                                                            pad(self.N))]:
            raise TruthError("det Y != det Y0 (1 + T) exactly")
        common = pgcd(self.D0, self.N)
        self.Dr = pdivmod(self.D0, common)[0]
        self.Nr = pdivmod(self.N, common)[0]
        self.hidden_deg = pdeg(common)
        kn, kd = low_order(self.Nr), low_order(self.Dr)
        self.origin = kn - kd            # > 0: zeros at s = 0; < 0: poles
        lead = self.g * self.Nr[kn] / self.Dr[kd]
        self.lowsign = 1 if lead > 0 else -1
        if self.origin == 0:
            self.T0 = float(lead)
        elif self.origin < 0:
            self.T0 = math.inf if lead > 0 else -math.inf
        else:
            self.T0 = 0.0
        self.ol = self.roots(self.D0, ref.ol, "open-loop poles")
        self.zeros = self.roots(self.Nr, ref.zeros, "zeros")
        self.cl = self.roots(self.Dcl, ref.cl, "closed-loop poles")
        rc = rhp_count(self.Dcl)
        if rc is None:
            self.stable = all(z.real < 0 for z in self.cl)
        else:
            self.stable = rc == (0, 0)
            if self.stable != all(z.real < 0 for z in self.cl):
                raise TruthError("Routh array and polished roots disagree")
        rc0 = rhp_count(self.Dr)
        self.ol_rhp = rc0[0] if rc0 else sum(1 for z in self.ol
                                            if z.real > 0)

    # ---- roots ----------------------------------------------------------
    def roots(self, poly, starts, what):
        poly = ptrim(poly)
        k0 = 0
        while len(poly) > 1 and poly[0] == 0:
            poly = poly[1:]
            k0 += 1
        d = pdeg(poly)
        if d <= 0:
            return [0j] * k0
        starts = list(starts)
        if len(starts) == k0 + d:
            # keep scipy's order (owner nodes are indexed by it): the k0
            # smallest become the exact roots at s = 0
            zero_at = set(sorted(range(len(starts)),
                                 key=lambda j: abs(starts[j]))[:k0])
        else:
            # scipy found a different number: start from numpy.roots of the
            # polynomial in a scaled variable instead
            sc = float(abs(poly[0] / poly[-1])) ** (1.0 / d) or 1.0
            cf = [float(c * Fraction(sc) ** k / poly[-1]) for k, c in
                  enumerate(poly)]
            starts = [0j] * k0 + [z * sc for z in np.roots(cf[::-1])]
            zero_at = set(range(k0))
        dp = [k * c for k, c in enumerate(poly)][1:]
        if pdeg(pgcd(poly, dp)) > 0:
            raise TruthError("%s: multiple root, exact polish not used" % what)
        got = [polish_root(poly, z, iters=60)
               for j, z in enumerate(starts) if j not in zero_at]
        for z in got:
            # converged: one more exact Newton step no longer moves it
            (a, b), (c, e) = cpoly_eval(poly, (Fraction(z.real),
                                               Fraction(z.imag)))
            den = c * c + e * e
            step = abs(complex(float((a * c + b * e) / den),
                               float((b * c - a * e) / den))) if den else 0
            if not step <= 1e-12 * abs(z):
                raise TruthError("%s: Newton did not converge at %r (step "
                                 "%.3g)" % (what, z, step))
        for a in range(len(got)):
            for b in range(a):
                if abs(got[a] - got[b]) <= 1e-13 * abs(got[a]):
                    raise TruthError("%s: two starts polished to one root %r"
                                     % (what, got[a]))
        # completeness: the roots reproduce the coefficients' sum and product
        ssum = -poly[-2] / poly[-1] if d >= 1 else Fraction(0)
        tot = sum(got)
        scale = sum(abs(z) for z in got)
        if abs(tot - complex(float(ssum))) > 1e-9 * scale:
            raise TruthError("%s: root sum %r, coefficients say %r"
                             % (what, tot, float(ssum)))
        lp = sum(math.log(abs(z)) for z in got)
        lq = (math.log(abs(poly[0].numerator)) - math.log(poly[0].denominator)
              - math.log(abs(poly[-1].numerator))
              + math.log(poly[-1].denominator))
        if abs(lp - lq) > 1e-9 * d * max(1.0, abs(lq)):
            raise TruthError("%s: root product off (log %r vs %r)"
                             % (what, lp, lq))
        it = iter(got)
        return [0j if j in zero_at else complex(next(it))
                for j in range(len(starts))]

    # ---- T(jw) ----------------------------------------------------------
    def T(self, w):
        """Exact T at the rational point s = j Fraction(w), as a complex."""
        s = (Fraction(0), Fraction(float(w)))
        nr, ni = peval(self.N, s)
        dr, di = peval(self.D0, s)
        den = dr * dr + di * di
        g = self.g
        return complex(float(g * (nr * dr + ni * di) / den),
                       float(g * (ni * dr - nr * di) / den))

    def logmag(self, w):
        s = (Fraction(0), Fraction(float(w)))
        nr, ni = peval(self.N, s)
        dr, di = peval(self.D0, s)
        num = self.g * self.g * (nr * nr + ni * ni)
        den = dr * dr + di * di
        return 0.5 * (math.log(num.numerator) - math.log(num.denominator)
                      - math.log(den.numerator) + math.log(den.denominator))

    # ---- margins, on the Ref's (scipy) grid, refined on the exact T -----
    def margins(self):
        ref = self.ref
        f, t, ph = ref.grid
        n = len(f)
        # how far is scipy's T from the exact one?  A sample of the grid
        sample = sorted(set(list(range(0, n, max(1, n // 150))) + [n - 1]))
        worst_m, worst_p = 0.0, 0.0
        for k in sample:
            te = self.T(TWO_PI * f[k])
            worst_m = max(worst_m, abs(math.log(abs(te) / abs(t[k]))))
            worst_p = max(worst_p, abs(math.degrees(cmath.phase(te / t[k]))))
        self.scipy_T_err = (worst_m, worst_p)
        if worst_m > 1e-6 or worst_p > 1e-3:
            # scipy cannot be trusted on this grid: the exact T everywhere
            te = np.array([self.T(TWO_PI * x) for x in f])
            phe = np.degrees(np.unwrap(np.angle(te)))
            phe += 360.0 * round((ph[0] - phe[0]) / 360.0)
            t, ph = te, phe
        else:
            t = np.array(t, dtype=complex)
        self.grid = (f, t, ph)
        sel = (f >= ref.fmin * (1 - 1e-12)) & (f <= ref.fmax * (1 + 1e-12))
        idx = np.nonzero(sel)[0]
        lf = np.log10(f)
        cache = {}

        def tex(k):
            if k not in cache:
                cache[k] = self.T(TWO_PI * f[k])
            return cache[k]

        def lm_at(k):
            return math.log(abs(tex(k)))

        def logmag(x):
            return self.logmag(TWO_PI * 10.0 ** x)

        def phase_local(x, k):
            tv = self.T(TWO_PI * 10.0 ** x)
            return ph[k] + math.degrees(cmath.phase(tv / t[k]))

        lm = np.log(np.abs(t))
        self.crossovers = []
        for a, b in zip(idx[:-1], idx[1:]):
            if lm[a] * lm[b] >= 0 and lm[a] != 0:
                continue
            la, lb = lm_at(a), lm_at(b)
            if la * lb > 0:
                raise TruthError("crossover bracket at %.6g Hz does not hold "
                                 "on the exact T" % f[a])
            xc = brentq(logmag, lf[a], lf[b], xtol=1e-15, rtol=1e-15,
                        maxiter=200) if la != 0 else lf[a]
            fc = 10.0 ** xc
            self.crossovers.append((fc, 180.0 + phase_local(xc, a)))
        if self.crossovers:
            self.crossover_hz, self.pm = min(self.crossovers,
                                             key=lambda c: c[1])
        else:
            self.crossover_hz, self.pm = None, None
        self.phase_crossings = []
        for a, b in zip(idx[:-1], idx[1:]):
            ua, ub = (ph[a] + 180.0) / 360.0, (ph[b] + 180.0) / 360.0
            lo_, hi_ = min(ua, ub), max(ua, ub)
            for m in range(math.floor(lo_) + 1, math.floor(hi_) + 1):
                target = -180.0 + 360.0 * m
                fp = 10.0 ** brentq(lambda x: phase_local(x, a) - target,
                                    lf[a], lf[b], xtol=1e-15, rtol=1e-15,
                                    maxiter=200)
                gm = -self.logmag(TWO_PI * fp) / math.log(10.0) * 20.0
                self.phase_crossings.append((fp, gm))
        if math.isfinite(self.T0) and self.T0 < 0:
            # as in Ref._margins, from the exact T(0)
            self.phase_crossings.insert(0, (0.0, -20.0 * math.log10(-self.T0)))
        if self.phase_crossings:
            self.phase_crossover_hz, self.gm = min(self.phase_crossings,
                                                   key=lambda c: c[1])
        else:
            self.phase_crossover_hz, self.gm = None, None

    def bode(self, fq):
        """Exact |T| (dB) and unwrapped phase (deg) at the CSV frequencies."""
        f, t, ph = self.ref.phase_profile(extra=fq)
        pos = {x: k for k, x in enumerate(f)}
        out = {}
        for fr in fq:
            k = pos[fr]
            te = self.T(TWO_PI * fr)
            out[fr] = (20.0 * math.log10(abs(te)),
                       ph[k] + math.degrees(cmath.phase(te / t[k])))
        return out

    def loop_own_gains(self):
        """Own DC gains of the declared loops, by exact elimination."""
        net = self.ref.net
        res = []
        for name, sign, off, pg in self.ref.loop_plan():
            if pg is None:
                res.append((name, sign, None))
                continue
            e = net.elem(pg)
            G0, _ = build_exact(net, off=off | {pg})
            x = fsolve_entry(G0, net.idx(e[2]), net.idx(e[3]))
            res.append((name, sign, None if x is None
                        else float(-Fraction(e[4]) * x)))
        return res


def attach_truth(ref):
    """Replace the Ref's answers by the exact ones; returns the Truth and
    what scipy (double precision) had said, for the INFO lines."""
    scipy = dict(T0=ref.T0, ol=list(ref.ol), zeros=list(ref.zeros),
                 cl=list(ref.cl),
                 stable=all(z.real < 0 for z in ref.cl))
    sp_ol = list(ref.ol)
    tr = Truth(ref)
    ref.truth = tr
    ref.lowsign = tr.lowsign
    ref.T0, ref.ol, ref.zeros, ref.cl = tr.T0, tr.ol, tr.zeros, tr.cl
    ref._band()
    ref._margins()                   # scipy's T on a grid over the exact band
    scipy["crossovers"] = list(ref.crossovers)
    scipy["phase_crossings"] = list(ref.phase_crossings)
    ref.stable = tr.stable
    tr.margins()
    for k in ("crossovers", "crossover_hz", "pm", "phase_crossings",
              "phase_crossover_hz", "gm"):
        setattr(ref, k, getattr(tr, k))
    if len(sp_ol) == len(tr.ol):
        # owner nodes were found for scipy's poles: follow the exact ones
        cost = np.array([[abs(a - b) for b in sp_ol] for a in tr.ol])
        rows, cols = linear_sum_assignment(cost)
        own, pfr = list(ref.ol_owner), list(ref.ol_pf_ratio)
        for r, c in zip(rows, cols):
            ref.ol_owner[r], ref.ol_pf_ratio[r] = own[c], pfr[c]
    return tr, scipy


# --------------------------------------------------------------------------
# Self test: closed forms and exact polynomials
# --------------------------------------------------------------------------

SELF_ONE_POLE = """
# single pole: sense node with no capacitance, one RC node
param R = 20k
node x r=R c=2n
node s r=1k
gm gx s -> x -5m
res rfb x s 9k
loop main negative s x
break gx
"""

SELF_TWO_POLE = """
node a r=1.6M c=100p
node b r=1k c=159p
gm ga b -> a -62.5u
gm gb a -> b 1m
loop main negative b a
break ga
"""

SELF_THREE_POLE = """
param gs = 190u
node n1 r=10k c=10p
node n2 r=10k c=10p
node n3 r=10k c=10p
gm g1 n3 -> n1 -gs
gm g2 n1 -> n2 gs
gm g3 n2 -> n3 gs
loop ring negative n1 n2 n3
break g1
"""

SELF_MILLER = """
param gm1 = 200u
param gm2 = 2m
param ccomp = 2p
node x1 r=1M c=80f
node out r=50k c=5p
node inn r=inf c=20f
gm g1 inn -> x1 gm1
gm g2 x1 -> out -gm2
cap cc x1 out ccomp
res fb out inn 1k
loop main negative inn x1 out
break g1
"""

SELF_DECOUPLED = """
node a r=100k c=10p
node b r=10k c=10p
node ext r=10k c=20p
gm ga b -> a -1m
gm gb a -> b 100u
gm gx b -> ext 1m
loop main negative a b
break ga
"""

SELF_INTEGRATOR = """
node int r=inf c=10p
node out r=10k c=1p
gm gi out -> int -100u
gm go int -> out 1m
loop main negative int out
break gi
"""

# node a alone has a negative conductance (-1/100k net, pole at +1/(R C));
# the loop through b (gain 2 * 10) holds it: 1 + T = 0 has its root at -.
SELF_RHP = """
node a r=50k c=1p
node b r=10k c=1p
gm gneg a -> a 30u
gm gab a -> b -1m
gm gba b -> a 200u
loop main negative a b
break gab
"""


def close(a, b, rel=1e-9, abs_=0.0):
    return abs(a - b) <= max(rel * max(abs(a), abs(b)), abs_)


def check_exact(ref, label):
    """Assert that the numpy/scipy answers agree with exact polynomials."""
    net = ref.net
    D0, N, Dcl, g = exact_model(net)
    # det Y = det Y0 (1 + T), T = g N / D0  ->  Dcl = D0 + g N exactly
    # (SPEC section 1; follows from the rank-one update of Y0 by the break).
    m = max(len(D0), len(N), len(Dcl))
    pad = lambda p: p + [Fraction(0)] * (m - len(p))
    lhs = pad(Dcl)
    rhs = [x + g * y for x, y in zip(pad(D0), pad(N))]
    assert lhs == rhs, label + ": det Y != det Y0 (1+T)"
    # pole counts: degree of det(G0 + sC) = number of finite open-loop poles
    assert pdeg(D0) == len(ref.ol), (label, pdeg(D0), len(ref.ol))
    assert pdeg(Dcl) == len(ref.cl), (label, pdeg(Dcl), len(ref.cl))
    # zero count: deg N less the common factor with D0 (decoupled modes)
    common = pdeg(pgcd(D0, N)) if pdeg(N) > 0 else 0
    assert pdeg(N) - common == len(ref.zeros), \
        (label, pdeg(N), common, len(ref.zeros))
    # every eigenvalue agrees with its Newton-polished exact root
    for poly, roots, what in ((D0, ref.ol, "ol"), (Dcl, ref.cl, "cl"),
                              (N, ref.zeros, "zero")):
        for z in roots:
            multiple = sum(1 for w in roots if abs(w - z) < 1e-3 * abs(z)) > 1
            if multiple:
                continue
            zp = polish_root(poly, z)
            assert abs(zp - z) <= 1e-9 * abs(z), (label, what, z, zp)
    # DC gain: T(0) = g N(0) / D0(0)
    if D0[0] != 0:
        assert close(ref.T0, float(g * N[0] / D0[0]), 1e-12), label
    # T(jw) against the exact ratio at a few frequencies across the band
    for f in np.logspace(math.log10(ref.fmin), math.log10(ref.fmax), 7):
        w = Fraction(float(TWO_PI * f))
        (nr, ni), _ = cpoly_eval(N, (Fraction(0), w))
        (dr, di), _ = cpoly_eval(D0, (Fraction(0), w))
        den = dr * dr + di * di
        te = complex(float(g * (nr * dr + ni * di) / den),
                     float(g * (ni * dr - nr * di) / den))
        tn = ref.T(1j * TWO_PI * f)
        assert abs(tn - te) <= 1e-11 * abs(te), (label, f, tn, te)
    return True


def selftest():
    # --- expression parser (SPEC section 2) ---
    P = {"a": 3.0}
    assert eval_expr("-2^2", P) == -4.0             # unary minus looser than ^
    assert eval_expr("2^3^2", P) == 512.0           # ^ is right-associative
    assert eval_expr("1e3k", P) == 1e6              # SPEC: 1e3k is 1e6
    assert close(eval_expr("2.2pF", P), 2.2e-12, 1e-15)
    assert eval_expr("(1+2)*a - 10k/2", P) == 9.0 - 5000.0
    assert eval_expr("1Tohm", P) == 1e12
    assert close(eval_expr("40uS", P), 40e-6, 1e-15)
    assert eval_expr("1F", P) == 1.0 and eval_expr("1f", P) == 1e-15
    assert eval_expr("1m", P) == 1e-3 and eval_expr("1M", P) == 1e6
    assert eval_expr("max(2, sqrt(16)) / 2", P) == 2.0
    assert close(eval_expr("2*pi", P), 2 * math.pi, 1e-15)
    assert eval_expr(".5", P) == 0.5 and eval_expr("2.5E3", P) == 2500.0
    assert eval_expr("2^-1", P) == 0.5
    try:
        eval_expr("10meg", P)
        raise AssertionError("10meg accepted")
    except LoopError:
        pass

    # --- single pole: T(s) = A/(1+s/p) ---
    # Sense node s (1k to gnd, no C) divides the output by 1k/(9k+1k); the
    # RC node sees R || (9k + 1k).  Closed form of a one-pole loop:
    #   |T(jwc)| = 1  ->  wc = p sqrt(A^2 - 1)
    #   PM = 180 - atan(wc/p) = 180 - atan(sqrt(A^2 - 1))
    #   closed-loop pole: 1 + A/(1+s/p) = 0  ->  s = -p (1 + A)
    ref = Ref(parse_loop_text(SELF_ONE_POLE))
    Reff = 1.0 / (1.0 / 20e3 + 1.0 / 10e3)
    A = 5e-3 * Reff * (1e3 / 10e3)
    p = 1.0 / (Reff * 2e-9)
    assert close(ref.T0, A, 1e-12)
    assert len(ref.ol) == 1 and close(ref.ol[0], -p, 1e-12)
    assert ref.zeros == []
    assert len(ref.cl) == 1 and close(ref.cl[0], -p * (1 + A), 1e-12)
    assert len(ref.crossovers) == 1
    assert close(ref.crossover_hz, p * math.sqrt(A * A - 1) / TWO_PI, 1e-10)
    assert close(ref.pm, 180 - math.degrees(math.atan(math.sqrt(A * A - 1))),
                 0, 1e-8)
    assert ref.gm is None        # a single pole never reaches -180 degrees
    assert ref.stable
    check_exact(ref, "one pole")

    # --- two poles: T(s) = A/((1+s/p1)(1+s/p2)) ---
    #   |T|^2 = 1 with x = w^2:  x^2/(p1 p2)^2 + x (1/p1^2 + 1/p2^2) + 1 - A^2 = 0
    #   PM = 180 - atan(wc/p1) - atan(wc/p2)
    #   closed loop: s^2/(p1 p2) + s (1/p1 + 1/p2) + 1 + A = 0
    ref = Ref(parse_loop_text(SELF_TWO_POLE))
    p1, p2 = 1 / (1.6e6 * 100e-12), 1 / (1e3 * 159e-12)
    A = 62.5e-6 * 1.6e6 * 1e-3 * 1e3
    qa, qb, qc = 1 / (p1 * p2) ** 2, 1 / p1 ** 2 + 1 / p2 ** 2, 1 - A * A
    x = (-qb + math.sqrt(qb * qb - 4 * qa * qc)) / (2 * qa)
    wc = math.sqrt(x)
    assert close(ref.T0, A, 1e-12)
    assert sorted(abs(z) for z in ref.ol) == sorted([p1, p2]) or \
        all(close(u, v, 1e-12) for u, v in
            zip(sorted(abs(z) for z in ref.ol), sorted([p1, p2])))
    assert close(ref.crossover_hz, wc / TWO_PI, 1e-10)
    pm = 180 - math.degrees(math.atan(wc / p1) + math.atan(wc / p2))
    assert close(ref.pm, pm, 0, 1e-8)
    cl = np.roots([1 / (p1 * p2), 1 / p1 + 1 / p2, 1 + A])
    for z in cl:
        assert min(abs(z - w) for w in ref.cl) <= 1e-10 * abs(z)
    assert ref.gm is None        # two poles: phase tends to -180, never reaches
    check_exact(ref, "two poles")

    # --- three identical poles: T(s) = A/(1+s/p)^3 ---
    #   wc = p sqrt(A^(2/3) - 1), PM = 180 - 3 atan(sqrt(A^(2/3) - 1))
    #   phase -180 at w = p tan(60 deg) = p sqrt(3), where |T| = A/8:
    #   GM = 20 log10(8/A)
    #   closed loop: (1 + s/p)^3 = -A -> s = p (A^(1/3) e^{j pi (2k+1)/3} - 1)
    ref = Ref(parse_loop_text(SELF_THREE_POLE))
    p = 1 / (10e3 * 10e-12)
    A = (190e-6 * 10e3) ** 3
    assert close(ref.T0, A, 1e-12)
    u = math.sqrt(A ** (2 / 3) - 1)
    assert close(ref.crossover_hz, p * u / TWO_PI, 1e-10)
    assert close(ref.pm, 180 - 3 * math.degrees(math.atan(u)), 0, 1e-8)
    assert close(ref.phase_crossover_hz, p * math.sqrt(3) / TWO_PI, 1e-10)
    assert close(ref.gm, 20 * math.log10(8 / A), 0, 1e-9)
    # a triple (defective) open-loop pole: the cluster mean is well
    # conditioned, each member only to about eps^(1/3)
    assert len(ref.ol) == 3
    assert close(sum(ref.ol) / 3, -p, 1e-12)
    assert all(abs(z + p) <= 1e-4 * p for z in ref.ol)
    for k in range(3):
        z = p * (A ** (1 / 3) * cmath.exp(1j * math.pi * (2 * k + 1) / 3) - 1)
        assert min(abs(z - w) for w in ref.cl) <= 1e-10 * abs(z)
    assert ref.stable == (A < 8)
    check_exact(ref, "three poles")

    # --- Miller: right-half-plane zero at s = gm2/Cc ---
    # KCL at out: Y[out][x1] = gm2 - s Cc, so the x1 -> out transfer, and T,
    # vanish at s = +gm2/Cc exactly.
    ref = Ref(parse_loop_text(SELF_MILLER))
    zr = 2e-3 / 2e-12
    assert len(ref.zeros) == 1 and close(ref.zeros[0], zr, 1e-10)
    assert close(ref.T0, 200e-6 * 1e6 * 2e-3 * 50e3, 1e-12)
    check_exact(ref, "miller")

    # --- decoupled mode: ext is driven from the loop and feeds nothing back.
    # Y0 is block triangular, so det Y0 has the factor (1/R + sC) of ext
    # (pole at -1/(R C)) while [Y0^-1]_(i,o) does not depend on it.
    ref = Ref(parse_loop_text(SELF_DECOUPLED))
    pe = -1 / (10e3 * 20e-12)
    assert min(abs(z - pe) for z in ref.ol) <= 1e-12 * abs(pe)
    assert min(abs(z - pe) for z in ref.cl) <= 1e-12 * abs(pe)
    assert min(abs(z - pe) for z in ref.zeros_all) <= 1e-9 * abs(pe)
    assert all(abs(z - pe) > 1e-3 * abs(pe) for z in ref.zeros)
    assert len(ref.ol) == 3 and len(ref.zeros) == 0
    check_exact(ref, "decoupled")

    # --- the exact machinery used for tests/ref/extreme/ ---
    F = Fraction
    # Routh array: (RHP roots, roots at s = 0); polynomials low to high
    assert rhp_count([F(2), F(3), F(1)]) == (0, 0)          # (s+1)(s+2)
    assert rhp_count([F(-2), F(1), F(1)]) == (1, 0)         # (s-1)(s+2)
    assert rhp_count([F(0), F(1), F(1)]) == (0, 1)          # s(s+1)
    assert rhp_count([F(3), F(-2), F(-2), F(1)]) == (2, 0)  # (s^2-s+1)(s+3)
    assert rhp_count([F(6), F(11), F(6), F(1)]) == (0, 0)   # (s+1)(s+2)(s+3)
    # exact [A^-1]_(i,o)
    assert fsolve_entry([[F(2), F(1)], [F(1), F(1)]], 0, 1) == F(-1)
    assert fsolve_entry([[F(1), F(1)], [F(1), F(1)]], 0, 0) is None
    # two poles again, through the exact truth: the closed forms above
    ref = Ref(parse_loop_text(SELF_TWO_POLE), margins=False)
    tr, _ = attach_truth(ref)
    p1, p2 = 1 / (1.6e6 * 100e-12), 1 / (1e3 * 159e-12)
    A = 62.5e-6 * 1.6e6 * 1e-3 * 1e3
    qa, qb, qc = 1 / (p1 * p2) ** 2, 1 / p1 ** 2 + 1 / p2 ** 2, 1 - A * A
    wc = math.sqrt((-qb + math.sqrt(qb * qb - 4 * qa * qc)) / (2 * qa))
    assert close(tr.T0, A, 1e-12) and tr.origin == 0 and tr.lowsign == 1
    assert close(tr.crossover_hz, wc / TWO_PI, 1e-12)
    assert close(tr.pm, 180 - math.degrees(math.atan(wc / p1) +
                                           math.atan(wc / p2)), 0, 1e-9)
    assert all(min(abs(z + p) for z in tr.ol) <= 1e-14 * p for p in (p1, p2))
    assert tr.stable and tr.ol_rhp == 0
    # an integrator: T = K/(s (1 + s/p)), K = gm1 gm2 R2/C1, p = 1/(R2 C2);
    # |T(j wc)| = 1 -> wc^2 = p^2 (sqrt(1 + 4 K^2/p^2) - 1)/2,
    # PM = 90 - atan(wc/p); T(0) unbounded, anchor -90 degrees
    ref = Ref(parse_loop_text(SELF_INTEGRATOR), margins=False)
    tr, _ = attach_truth(ref)
    K, p = 100e-6 * 1e-3 * 10e3 / 10e-12, 1 / (10e3 * 1e-12)
    wc = p * math.sqrt((math.sqrt(1 + 4 * K * K / (p * p)) - 1) / 2)
    assert tr.origin == -1 and tr.T0 == math.inf and ref.anchor() == -90.0
    assert close(tr.crossover_hz, wc / TWO_PI, 1e-12)
    assert close(tr.pm, 90 - math.degrees(math.atan(wc / p)), 0, 1e-9)
    assert tr.ol[0] == 0 or tr.ol[1] == 0
    # an open-loop right-half-plane pole: the Routh count sees it
    ref = Ref(parse_loop_text(SELF_RHP), margins=False)
    tr, _ = attach_truth(ref)
    assert tr.ol_rhp == 1 and tr.T0 < 0 and tr.stable

    # --- every reference network: exact polynomials agree with numpy ---
    for path in sorted(glob.glob(os.path.join(HERE, "nets", "*.loop"))):
        net = parse_loop_file(path)
        ref = Ref(net)
        check_exact(ref, os.path.basename(path))
        for name, sign, dc in ref.loop_own_gains():
            want = "negative" if dc > 0 else "positive"
            assert sign == want, (path, name, sign, dc)
        assert (ref.T0 > 0) == (net.loops[0][1] == "negative"), path
        # the unwrapped phase must not depend on the grid: a coarser grid
        # (every other point) unwraps to the same curve
        f, t, ph = ref.grid
        ph2 = np.degrees(np.unwrap(np.angle(t[::2])))
        ph2 += 360.0 * round((ph[0] - ph2[0]) / 360.0)
        assert np.allclose(ph2, ph[::2], atol=1e-9), path
    print("selftest passed")
    return 0


# --------------------------------------------------------------------------
# Comparison driver
# --------------------------------------------------------------------------

class Tally:
    def __init__(self):
        self.passed = 0
        self.failed = 0
        self.known = 0

    def check(self, ok, label, detail=""):
        if ok:
            self.passed += 1
        else:
            self.failed += 1
        print("%s %s%s" % ("PASS" if ok else "FAIL", label,
                           (": " + detail) if detail else ""))
        return ok

    def note(self, tag, label, detail=""):
        print("%s %s%s" % (tag, label, (": " + detail) if detail else ""))


class FileTally:
    """Collects one network's checks; `numeric` marks the ones that measure
    accuracy (the ones an accuracy warning may excuse)."""

    def __init__(self, prefix):
        self.prefix = prefix
        self.items = []

    def check(self, ok, label, detail="", numeric=True):
        self.items.append((bool(ok), label, detail, numeric))
        return ok

    def flush(self, tally, known=None, warned=False, expect_warning=None,
              reported_warning=None):
        """Into the main tally.  A failing check named in `known` is printed
        as KNOWN (not counted as failed).  When loopwise set accuracy_warning,
        a failing numeric check is printed as WARNED and counts as passed:
        the report said that number is not to be trusted."""
        known = known or {}
        lost = []
        seen_known = []
        for ok, label, detail, numeric in self.items:
            key = label[len(self.prefix):]
            kn = next((k for k in known if key.startswith(k)), None)
            if not ok and kn is not None:
                tally.known += 1
                seen_known.append(key)
                tally.note("KNOWN", label, detail + " [known issue: %s]"
                           % known[kn])
            elif not ok and numeric and warned:
                tally.passed += 1
                lost.append(key)
                tally.note("WARNED", label, detail + " [accuracy_warning set]")
            else:
                if not ok and numeric:
                    lost.append(key)
                tally.check(ok, label, detail)
        if expect_warning is not None:
            # 'true': a double-precision nodal method genuinely loses these
            # numbers, so loopwise must warn unless it got them right anyway;
            # 'false': it must not warn, and every number must be right.
            rep = reported_warning is True
            if expect_warning:
                ok = rep or not lost
            else:
                ok = not rep and not lost
            why = ("numbers outside tolerance without the warning: "
                   if lost and not rep else "numbers outside tolerance: ")
            tally.check(ok, self.prefix + "accuracy_warning honest",
                        "expected %s, reported %r; %s%s%s"
                        % (str(expect_warning).lower(), reported_warning, why,
                           ", ".join(lost) if lost else "none",
                           "; known issues: " + ", ".join(seen_known)
                           if seen_known else ""))


def relerr(a, b):
    if a == b:
        return 0.0
    return abs(a - b) / max(abs(a), abs(b))


def match_sets(label, ref_hz, rep, tally, cluster_rel=1e-3, rel=1e-6,
               verbose=False, floor=1e-9):
    """ref_hz: list of complex (Hz); rep: list of dicts with re_hz, im_hz.
    Errors are relative to max(|ref|, floor * largest |ref|); the exact
    roots of an extreme network are compared with floor 0 (a root exactly at
    s = 0 then against 1e-9 of the largest)."""
    try:
        got = [complex(float(d["re_hz"]), float(d["im_hz"])) for d in rep]
    except (TypeError, KeyError, ValueError) as e:
        tally.check(False, label, "bad entries: %r" % (e,))
        return []
    if not tally.check(len(got) == len(ref_hz), label + " count",
                       "ref %d, reported %d%s" %
                       (len(ref_hz), len(got),
                        "" if len(got) == len(ref_hz) or not verbose else
                        "; ref [%s], reported [%s]"
                        % (", ".join(fmtc(z) for z in sorted(ref_hz, key=abs)),
                           ", ".join(fmtc(z) for z in got)))):
        return []
    if not ref_hz:
        return []
    big = max(abs(z) for z in ref_hz)
    cost = np.array([[abs(r - g) for g in got] for r in ref_hz])
    rows, cols = linear_sum_assignment(cost)
    pairs = dict(zip(rows, cols))
    # clusters of (numerically) multiple poles
    cl_id = list(range(len(ref_hz)))
    for a in range(len(ref_hz)):
        for b in range(a):
            if abs(ref_hz[a] - ref_hz[b]) <= cluster_rel * abs(ref_hz[a]):
                old = cl_id[a]
                cl_id = [cl_id[b] if c == old else c for c in cl_id]
    worst = 0.0
    bad = []
    every = []
    done_clusters = set()
    def scale_of(r):
        return max(abs(r), floor * big) if r != 0 else 1e-9 * big
    for k, r in enumerate(ref_hz):
        g = got[pairs[k]]
        scale = scale_of(r)
        err = abs(r - g) / scale
        members = [j for j in range(len(ref_hz)) if cl_id[j] == cl_id[k]]
        if len(members) > 1:
            if cl_id[k] in done_clusters:
                continue
            done_clusters.add(cl_id[k])
            rm = sum(ref_hz[j] for j in members) / len(members)
            gmn = sum(got[pairs[j]] for j in members) / len(members)
            e_mean = abs(rm - gmn) / scale_of(rm)
            e_mem = max(abs(ref_hz[j] - got[pairs[j]]) / scale_of(ref_hz[j])
                        for j in members)
            ok = e_mean <= rel and e_mem <= 1e-4
            worst = max(worst, e_mean)
            if not ok:
                bad.append("cluster x%d at %s: mean err %.2e, member err %.2e"
                           % (len(members), fmtc(rm), e_mean, e_mem))
            continue
        worst = max(worst, err)
        every.append("%s rel %.1e" % (fmtg(r), err))
        if err > rel:
            bad.append("ref %s got %s (rel %.2e)" % (fmtc(r), fmtc(g), err))
    tally.check(not bad, label + " values",
                (("worst rel %.2e" % worst) +
                 (" [%s]" % "; ".join(every) if verbose else ""))
                if not bad else "; ".join(bad))
    return [(ref_hz[k], pairs[k]) for k in range(len(ref_hz))]


def fmtc(z):
    return "%.9g%+.9gj" % (z.real, z.imag)


def fmtg(z):
    """Short form of a root in Hz for the summaries."""
    if z.imag == 0:
        return "%.6g" % z.real
    return "%.6g%+.6gj" % (z.real, z.imag)


def num_close(tally, label, ref, got, rel=None, abs_=None):
    if ref is None or got is None:
        return tally.check(ref is None and got is None, label,
                           "ref %r, reported %r" % (ref, got))
    try:
        got = float(got)
    except (TypeError, ValueError):
        return tally.check(False, label, "not a number: %r" % (got,))
    if rel is not None:
        e = relerr(ref, got)
        return tally.check(e <= rel, label, "ref %.12g, reported %.12g, rel %.2e"
                           % (ref, got, e))
    e = abs(ref - got)
    return tally.check(e <= abs_, label, "ref %.12g, reported %.12g, abs %.2e"
                       % (ref, got, e))


DEFAULT_TOL = {"dc": 1e-9, "dc_db": 1e-8, "cross": 1e-6, "pm": 0.01,
               "gm": 1e-4, "pcross": 1e-6, "roots": 1e-6, "bode_mag": 1e-6,
               "bode_phase": 1e-4, "loop_dc": 1e-9}


def read_directives(path):
    """'#%' lines of an extreme network:
         #% tol KEY=VALUE ...          tolerances (keys of DEFAULT_TOL)
         #% accuracy_warning true|false   what loopwise's flag must be
         #% known CHECK: text          a failing check that is a known issue
    """
    tol, known, warn = dict(DEFAULT_TOL), {}, None
    with open(path, encoding="utf-8") as fh:
        for line in fh:
            if not line.startswith("#%"):
                continue
            head, _, rest = line[2:].strip().partition(" ")
            if head == "tol":
                for kv in rest.split():
                    k, v = kv.split("=")
                    if k not in tol:
                        raise LoopError("unknown tolerance %r" % k)
                    tol[k] = float(v)
            elif head == "accuracy_warning":
                warn = {"true": True, "false": False}[rest.strip()]
            elif head == "known":
                k, _, text = rest.partition(":")
                known[k.strip()] = text.strip()
            else:
                raise LoopError("unknown directive %r" % line.strip())
    return tol, known, warn


def scipy_info(tally, L, ref, tr, sp):
    """How far double-precision scipy was from the exact answer."""
    def rootserr(ex, got):
        if len(ex) != len(got):
            return "count %d vs exact %d" % (len(got), len(ex))
        if not ex:
            return "none"
        cost = np.array([[abs(a - b) for b in got] for a in ex])
        rows, cols = linear_sum_assignment(cost)
        big = max(abs(z) for z in ex)
        return "%.1e" % max(abs(ex[r] - got[c]) / max(abs(ex[r]), 1e-9 * big)
                            for r, c in zip(rows, cols))
    parts = []
    if math.isfinite(tr.T0) and math.isfinite(sp["T0"]):
        parts.append("T0 rel %.1e" % relerr(tr.T0, sp["T0"]))
    else:
        parts.append("T0 %r (exact %r)" % (sp["T0"], tr.T0))
    parts.append("poles %s" % rootserr(tr.ol, sp["ol"]))
    parts.append("zeros %s" % rootserr(tr.zeros, sp["zeros"]))
    parts.append("cl poles %s" % rootserr(tr.cl, sp["cl"]))
    if len(sp["crossovers"]) == len(tr.crossovers):
        parts.append("crossovers rel %.1e" % max(
            [relerr(a[0], b[0]) for a, b in zip(tr.crossovers,
                                                sp["crossovers"])] or [0]))
        parts.append("PM abs %.1e deg" % max(
            [abs(a[1] - b[1]) for a, b in zip(tr.crossovers,
                                              sp["crossovers"])] or [0]))
    else:
        parts.append("crossovers %d vs exact %d" % (len(sp["crossovers"]),
                                                    len(tr.crossovers)))
    parts.append("T(jw) on the grid: |log| %.1e, phase %.1e deg"
                 % tr.scipy_T_err)
    parts.append("stable %s%s" % (sp["stable"], "" if sp["stable"] ==
                                  tr.stable else " (exact %s)" % tr.stable))
    tally.note("INFO", L + "scipy (double) vs exact", ", ".join(parts))


def compare_file(path, exe, tally, extreme=False, family=False):
    """family: a network of the regression family (family.py), which must
    come out right with no accuracy warning."""
    base = os.path.basename(path)
    if extreme:
        base = "extreme/" + base
    L = base + " "
    tol, known, expect_warning = DEFAULT_TOL, {}, (False if family else None)
    try:
        if extreme:
            tol, known, expect_warning = read_directives(path)
        net = parse_loop_file(path)
        ref = Ref(net, margins=not extreme)
        if extreme:
            tr, sp = attach_truth(ref)
            scipy_info(tally, L, ref, tr, sp)
    except Exception as e:          # the reference itself failed
        tally.check(False, base + " reference", repr(e))
        return
    ft = FileTally(L)
    js = compare_run(path, exe, ft, net, ref, L, tol, verbose=extreme)
    warned = bool(js and js.get("accuracy_warning") is True)
    ft.flush(tally, known=known, warned=warned and extreme,
             expect_warning=expect_warning if js is not None else None,
             reported_warning=js.get("accuracy_warning") if js else None)


def compare_run(path, exe, tally, net, ref, L, tol, verbose=False):
    """Runs check --json and gain --csv; every comparison goes to `tally`
    (a FileTally).  Returns the check JSON (None when it did not parse)."""
    base = L.strip()
    try:
        proc = subprocess.run([exe, "check", path, "--json"],
                              capture_output=True, timeout=120)
    except (OSError, subprocess.TimeoutExpired) as e:
        tally.check(False, base + " check run", repr(e), numeric=False)
        return None
    want_rc = 0 if ref.stable else 1
    tally.check(proc.returncode == want_rc, L + "check exit code",
                "expected %d, got %d%s" % (want_rc, proc.returncode,
                                           ("; stderr: " +
                                            proc.stderr.decode(errors="replace")
                                            .strip()[:300])
                                           if proc.returncode not in (0, 1)
                                           else ""))
    try:
        js = json.loads(proc.stdout.decode("utf-8"))
    except (ValueError, UnicodeDecodeError) as e:
        tally.check(False, L + "json", "unparsable: %s" % e, numeric=False)
        return None

    tally.check(js.get("break") == net.brk, L + "break",
                "ref %r, reported %r" % (net.brk, js.get("break")),
                numeric=False)
    t0 = None if math.isinf(ref.T0) else ref.T0
    num_close(tally, L + "dc_loop_gain", t0, js.get("dc_loop_gain"),
              rel=tol["dc"])
    t0db = None if (t0 is None or t0 == 0) else 20 * math.log10(abs(t0))
    if js.get("dc_loop_gain_db") is not None or verbose:
        num_close(tally, L + "dc_loop_gain_db", t0db,
                  js.get("dc_loop_gain_db"), abs_=tol["dc_db"])
    num_close(tally, L + "crossover_hz", ref.crossover_hz,
              js.get("crossover_hz"), rel=tol["cross"])
    num_close(tally, L + "phase_margin_deg", ref.pm,
              js.get("phase_margin_deg"), abs_=tol["pm"])
    rep_x = js.get("crossovers") or []
    if tally.check(len(rep_x) == len(ref.crossovers), L + "crossovers count",
                   "ref %d, reported %d" % (len(ref.crossovers), len(rep_x))):
        for k, ((fc, pm), d) in enumerate(zip(ref.crossovers,
                                              sorted(rep_x,
                                                     key=lambda d: d["hz"]))):
            num_close(tally, L + "crossovers[%d].hz" % k, fc, d.get("hz"),
                      rel=tol["cross"])
            num_close(tally, L + "crossovers[%d].phase_margin_deg" % k, pm,
                      d.get("phase_margin_deg"), abs_=tol["pm"])
    num_close(tally, L + "gain_margin_db", ref.gm, js.get("gain_margin_db"),
              abs_=tol["gm"])
    num_close(tally, L + "phase_crossover_hz", ref.phase_crossover_hz,
              js.get("phase_crossover_hz"), rel=tol["pcross"])
    tally.check(js.get("stable") is ref.stable, L + "stable",
                "ref %r, reported %r" % (ref.stable, js.get("stable")))
    # SPEC 7: the Nyquist count's Z is the number of closed-loop poles in
    # the right half-plane, here from scipy's generalized eigenvalues
    nq = js.get("nyquist")
    cl = getattr(getattr(ref, "truth", None), "cl", None) or ref.cl
    want_z = sum(1 for z in cl if z.real > 0)
    if nq is not None and nq.get("closed_loop_rhp") is not None:
        tally.check(nq.get("closed_loop_rhp") == want_z, L + "nyquist closed_loop_rhp",
                    "ref %d closed-loop poles in the right half-plane, count %r (N %r, P %r)"
                    % (want_z, nq.get("closed_loop_rhp"), nq.get("encirclements"),
                       nq.get("open_loop_rhp")))
    else:
        tally.check(nq is not None and any(abs(z.real) <= 1e-9 * abs(z) for z in cl),
                    L + "nyquist decided",
                    "count missing or undecided (%r) without a closed-loop pole on the axis"
                    % (nq,))

    to_hz = lambda zs: [z / TWO_PI for z in zs]
    olp = js.get("open_loop_poles") or []
    floor = 0.0 if verbose else 1e-9
    pairs = match_sets(L + "open_loop_poles", to_hz(ref.ol), olp, tally,
                       rel=tol["roots"], verbose=verbose, floor=floor)
    match_sets(L + "open_loop_zeros", to_hz(ref.zeros),
               js.get("open_loop_zeros") or [], tally, rel=tol["roots"],
               verbose=verbose, floor=floor)
    match_sets(L + "closed_loop_poles", to_hz(ref.cl),
               js.get("closed_loop_poles") or [], tally, rel=tol["roots"],
               verbose=verbose, floor=floor)
    for key in ("open_loop_poles", "open_loop_zeros", "closed_loop_poles"):
        lst = js.get(key) or []
        ok = True
        for a, b in zip(lst, lst[1:]):
            ma = math.hypot(a["re_hz"], a["im_hz"])
            mb = math.hypot(b["re_hz"], b["im_hz"])
            if mb < ma * (1 - 1e-9):
                ok = False
            elif abs(ma - mb) <= 1e-9 * max(ma, mb) and b["im_hz"] < a["im_hz"]:
                ok = False
        tally.check(ok, L + key + " sorted",
                    "by magnitude, then imaginary part", numeric=False)

    # whether T sees each open-loop pole (extreme networks: from the exact
    # common factor of D0 and N, SPEC section 1 'decoupled modes')
    truth = getattr(ref, "truth", None)
    if truth is not None and pairs and len(olp) == len(ref.ol):
        hid = []
        for z, j in pairs:
            zr = z * TWO_PI
            seen = True
            if truth.hidden_deg > 0:
                common = pgcd(truth.D0, truth.N)
                v = peval(common, (Fraction(zr.real), Fraction(zr.imag)))
                dv = cpoly_eval(common, (Fraction(zr.real),
                                         Fraction(zr.imag)))[1]
                seen = not (abs(complex(float(v[0]), float(v[1]))) <=
                            1e-6 * abs(zr) * abs(complex(float(dv[0]),
                                                         float(dv[1]))))
            rep = olp[j].get("in_loop_gain")
            if rep is not seen:
                hid.append("%s: exact %s, reported %r"
                           % (fmtg(z), seen, rep))
        tally.check(not hid, L + "open_loop_poles in_loop_gain",
                    "; ".join(hid))

    # owner node and one-pole-per-node estimate (extra, SPEC section 1)
    if pairs and len(olp) == len(ref.ol):
        bad_owner, bad_est = [], []
        refhz = to_hz(ref.ol)
        for k, (z, j) in enumerate(pairs):
            d = olp[j]
            mult = sum(1 for w in refhz if abs(w - z) <= 1e-3 * abs(z)) > 1
            if not mult and ref.ol_pf_ratio[k] > 1.05 and \
                    d.get("node") != ref.ol_owner[k]:
                bad_owner.append("%s: ref %s, reported %r"
                                 % (fmtc(z), ref.ol_owner[k], d.get("node")))
            node = d.get("node")
            if node in net.nodes:
                est = ref.estimate_hz(node)
                ge = d.get("estimate_hz")
                if (est is None) != (ge is None) or \
                        (est is not None and relerr(est, ge) > 1e-9):
                    bad_est.append("%s: ref %r, reported %r" % (node, est, ge))
            else:
                bad_est.append("unknown node %r" % (node,))
        tally.check(not bad_owner, L + "open_loop_poles owner node",
                    "; ".join(bad_owner))
        tally.check(not bad_est, L + "open_loop_poles estimate_hz",
                    "; ".join(bad_est), numeric=False)

    # declared loops' own DC gains
    rep_loops = {d.get("name"): d for d in (js.get("loops") or [])}
    for name, sign, dc in ref.loop_own_gains():
        d = rep_loops.get(name)
        if not tally.check(d is not None and d.get("sign") == sign,
                           L + "loop %s sign" % name,
                           "ref %s, reported %r" % (sign, d), numeric=False):
            continue
        if dc is not None and math.isinf(dc):
            dc = None
        num_close(tally, L + "loop %s dc_gain" % name, dc, d.get("dc_gain"),
                  rel=tol["loop_dc"])

    compare_bode(path, exe, tally, ref, L, tol)
    return js


def compare_bode(path, exe, tally, ref, L, tol):
    tmpd = tempfile.mkdtemp(prefix="loopwise_ref_")
    csv = os.path.join(tmpd, "bode.csv")
    try:
        proc = subprocess.run([exe, "gain", path, "--csv", csv,
                               "--points", "60"],
                              capture_output=True, timeout=120)
        # SPEC section 5: 'gain' exits 1 on an unstable loop, as check does
        want_rc = 0 if ref.stable else 1
        tally.check(proc.returncode == want_rc, L + "gain exit code",
                    "expected %d, got %d" % (want_rc, proc.returncode))
        if not tally.check(proc.returncode in (0, 1) and os.path.exists(csv),
                           L + "gain run",
                           "exit %d; %s" % (proc.returncode,
                                            proc.stderr.decode(
                                                errors="replace")[:300]),
                           numeric=False):
            return
        with open(csv, encoding="utf-8") as fh:
            lines = [ln.strip() for ln in fh if ln.strip()]
    finally:
        if os.path.exists(csv):
            os.remove(csv)
        os.rmdir(tmpd)
    if not tally.check(lines and lines[0] == "freq_hz,mag_db,phase_deg",
                       L + "gain header", repr(lines[0] if lines else None),
                       numeric=False):
        return
    rows = []
    try:
        for ln in lines[1:]:
            f, m, p = (float(x) for x in ln.split(","))
            rows.append((f, m, p))
    except ValueError:
        tally.check(False, L + "gain rows", "unparsable row %r" % ln,
                    numeric=False)
        return
    tally.check(len(rows) == 60, L + "gain points", "got %d rows" % len(rows),
                numeric=False)
    if not rows:
        return
    tally.check(relerr(rows[0][0], ref.fmin) <= 1e-6 and
                relerr(rows[-1][0], ref.fmax) <= 1e-6, L + "gain band",
                "ref %.9g..%.9g Hz, csv %.9g..%.9g Hz"
                % (ref.fmin, ref.fmax, rows[0][0], rows[-1][0]))
    fq = [r[0] for r in rows]
    truth = getattr(ref, "truth", None)
    if truth is not None:
        want = truth.bode(fq)
    else:
        f, t, ph = ref.phase_profile(extra=fq)
        pos = {x: k for k, x in enumerate(f)}
        want = {fr: (20 * math.log10(abs(t[pos[fr]])), ph[pos[fr]])
                for fr in fq}
    wm, wp = 0.0, 0.0
    badm, badp = [], []
    for fr, m, p in rows:
        rm, rp = want[fr]
        em, ep = abs(rm - m), abs(rp - p)
        wm, wp = max(wm, em), max(wp, ep)
        if em > tol["bode_mag"]:
            badm.append("%.6g Hz: ref %.9f dB, csv %.9f" % (fr, rm, m))
        if ep > tol["bode_phase"]:
            badp.append("%.6g Hz: ref %.6f deg, csv %.6f" % (fr, rp, p))
    tally.check(not badm, L + "gain magnitude",
                ("max abs err %.2e dB" % wm) if not badm else
                "%d rows off, max %.2e dB; first: %s" % (len(badm), wm,
                                                         badm[0]))
    tally.check(not badp, L + "gain phase (unwrapped)",
                ("max abs err %.2e deg" % wp) if not badp else
                "%d rows off, max %.2e deg; first: %s" % (len(badp), wp,
                                                          badp[0]))


def describe(path):
    """Print the reference answers for one network (no comparison); the
    exact ones for a network in extreme/."""
    extreme = os.path.basename(os.path.dirname(os.path.abspath(path))) \
        == "extreme"
    ref = Ref(parse_loop_file(path), margins=not extreme)
    if extreme:
        attach_truth(ref)
    print("%s: break %s, T(0) = %.12g, band %.4g..%.4g Hz"
          % (os.path.basename(path), ref.net.brk, ref.T0, ref.fmin, ref.fmax))
    print("  crossovers:", [("%.9g Hz" % f, "%.6f deg" % p)
                            for f, p in ref.crossovers])
    print("  gain margin: %s at %s Hz" % (ref.gm, ref.phase_crossover_hz))
    for lab, zs in (("open-loop poles", ref.ol), ("zeros", ref.zeros),
                    ("closed-loop poles", ref.cl)):
        print("  %s (Hz):" % lab, ", ".join(fmtc(z / TWO_PI) for z in
                                            sorted(zs, key=abs)))
    print("  owners:", list(zip([fmtc(z / TWO_PI) for z in ref.ol],
                                ref.ol_owner)))
    print("  stable:", ref.stable, " loops:", ref.loop_own_gains())


def main(argv):
    if "--selftest" in argv:
        return selftest()
    if "--describe" in argv:
        files = [a for a in argv if a != "--describe"] or \
            sorted(glob.glob(os.path.join(HERE, "nets", "*.loop")))
        for p in files:
            describe(p)
        return 0
    files = argv or (sorted(glob.glob(os.path.join(HERE, "nets", "*.loop"))) +
                     sorted(glob.glob(os.path.join(HERE, "extreme",
                                                   "*.loop"))))
    exe = os.environ.get("LOOPWISE", "./loopwise")
    tally = Tally()
    for p in files:
        extreme = os.path.basename(os.path.dirname(os.path.abspath(p))) \
            == "extreme"
        compare_file(p, exe, tally, extreme=extreme)
    if tally.known:
        print("%d known issue%s (KNOWN lines above; not counted as failed)"
              % (tally.known, "" if tally.known == 1 else "s"))
    print("%d passed, %d failed" % (tally.passed, tally.failed))
    return 1 if tally.failed else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
