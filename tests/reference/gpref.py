"""Independent Gummel-Poon reference for the test_gp_*.py checks: the whole model card
(IRB RBM, XTF VTF ITF, PTF, XCJC, CJS VJS MJS, TR and the temperature laws) and a small
nodal solver, written here from the published equations and sharing nothing with the C.

Equations (as stated in docs/models.md sections 3-6; the sources, recalled from memory):
  H. K. Gummel, H. C. Poon, Bell Syst. Tech. J. 49, 827-852, 1970 (the integral charge
  model); the SPICE2 parameterisation of L. W. Nagel (UCB/ERL M520, 1975) and I. Getreu,
  "Modeling the Bipolar Transistor", Tektronix 1976; P. Antognetti, G. Massobrio (eds.),
  "Semiconductor Device Modeling with SPICE", 2nd ed., McGraw-Hill 1993, ch. 2:
    IF = IS (exp(Vbe/(NF Vt)) - 1), IR = IS (exp(Vbc/(NR Vt)) - 1)
    qb = q1/2 (1 + sqrt(1 + 4 q2)), q1 = 1/(1 - Vbc/VAF - Vbe/VAR), q2 = IF/IKF + IR/IKR
    IC = (IF - IR)/qb - IR/BR - ISC (...), IB = IF/BF + ISE (...) + IR/BR + ISC (...)
    rbb = RBM + 3 (RB - RBM) (tan z - z)/(z tan^2 z),
          z = (-1 + sqrt(1 + 144 ib/(pi^2 IRB))) / ((24/pi^2) sqrt(ib/IRB))   (IRB given)
    rbb = RBM + (RB - RBM)/qb                                                 (no IRB)
    Qf = TF (1 + XTF (IF/(IF + ITF))^2 exp(Vbc/(1.44 VTF))) IF/qb,  Qr = TR IR
    depletion charges: the integral of C = CJ (1 - V/VJ)^-M below FC VJ, the linear
    continuation above; XCJC CJC at b', (1 - XCJC) CJC from b to c'; CJS from s to c' with
    FC = 0; excess phase: d((IF - IR)/qb)/dVbe times exp(-j w PTF (pi/180) TF).
  Temperature (r = T/TNOM): IS r^XTI exp((r - 1) EG/Vt), BF and BR times r^XTB,
  ISE r^-XTB (IS(T)/IS)^(1/NE) (ISC with NC); VJ(T) = VJ r - 3 Vt ln r - EG(TNOM) r + EG(T)
  with EG(T) = 1.16 - 7.02e-4 T^2/(T + 1108) (Y. P. Varshni, Physica 34, 149, 1967),
  CJ(T) = CJ (1 + M (4e-4 (T - TNOM) - VJ(T)/VJ + 1)) for (VJE CJE MJE), (VJC CJC MJC),
  (VJS CJS MJS).
  Thermal noise 4kT/R (Johnson 1928, Nyquist 1928), shot noise 2q|I| (Schottky 1918).
Numerics here (not the C's): the depletion charges in closed form, checked against
scipy.integrate.quad of the capacitance; derivatives are Richardson-extrapolated central differences, the
operating point is scipy.optimize.root, the transient a fixed-step trapezoidal rule solved
with scipy.optimize.root at every step.
"""

import csv
import math
import os
import subprocess
import tempfile

import numpy as np
from scipy.integrate import quad
from scipy.optimize import root

K = 1.380649e-23
Q = 1.602176634e-19
GMIN = 1e-12
INF = math.inf

DEFAULTS = dict(IS=1e-16, BF=100.0, NF=1.0, VAF=INF, IKF=INF, ISE=0.0, NE=1.5, BR=1.0,
                NR=1.0, VAR=INF, IKR=INF, ISC=0.0, NC=2.0, RB=0.0, RE=0.0, RC=0.0,
                CJE=0.0, VJE=0.75, MJE=0.33, CJC=0.0, VJC=0.75, MJC=0.33, FC=0.5, TF=0.0,
                TR=0.0, XTB=0.0, XTI=3.0, EG=1.11, TNOM=27.0, IRB=INF, RBM=None, XTF=0.0,
                VTF=INF, ITF=0.0, PTF=0.0, XCJC=1.0, CJS=0.0, VJS=0.75, MJS=0.0)


def expm1(x):
    """expm1, continued as a straight line above 80 so the root finder may explore."""
    return math.expm1(x) if x < 80.0 else math.exp(80.0) * (1.0 + x - 80.0) - 1.0


def vt(temp_k):
    return K * temp_k / Q


def eg(temp_k):
    return 1.16 - 7.02e-4 * temp_k ** 2 / (temp_k + 1108.0)


def vj_cj(vj, cj, m, t, tnom):
    r = t / tnom
    v = vj * r - 3.0 * vt(t) * math.log(r) - eg(tnom) * r + eg(t)
    return v, cj * (1.0 + m * (4e-4 * (t - tnom) - v / vj + 1.0))


class Gp:
    """One transistor's card scaled to temperature and area (NPN sense inside)."""

    def __init__(self, card, npn=True, area=1.0, temp_c=27.0):
        p = dict(DEFAULTS)
        p.update(card)
        if p["RBM"] is None:
            p["RBM"] = p["RB"]
        t, tnom = temp_c + 273.15, p["TNOM"] + 273.15
        r = t / tnom
        self.vt, self.t, self.pol = vt(t), t, 1.0 if npn else -1.0
        ratio = r ** p["XTI"] * math.exp((r - 1.0) * p["EG"] / self.vt)
        s = dict(p)
        s["IS"] = p["IS"] * ratio * area
        s["BF"], s["BR"] = p["BF"] * r ** p["XTB"], p["BR"] * r ** p["XTB"]
        s["ISE"] = p["ISE"] * r ** -p["XTB"] * ratio ** (1.0 / p["NE"]) * area
        s["ISC"] = p["ISC"] * r ** -p["XTB"] * ratio ** (1.0 / p["NC"]) * area
        for j in ("E", "C", "S"):
            s["VJ" + j], s["CJ" + j] = vj_cj(p["VJ" + j], p["CJ" + j], p["MJ" + j], t, tnom)
            s["CJ" + j] *= area
        for k in ("IKF", "IKR", "IRB", "ITF"):
            s[k] = p[k] * area
        for k in ("RB", "RBM", "RE", "RC"):
            s[k] = p[k] / area
        self.p = s

    # --- DC -------------------------------------------------------------------------------
    def _parts(self, vbe, vbc):
        p, v = self.p, self.vt
        i_f = p["IS"] * expm1(vbe / (p["NF"] * v))
        i_r = p["IS"] * expm1(vbc / (p["NR"] * v))
        q1 = 1.0 / (1.0 - vbc / p["VAF"] - vbe / p["VAR"])
        qb = 0.5 * q1 * (1.0 + math.sqrt(1.0 + 4.0 * (i_f / p["IKF"] + i_r / p["IKR"])))
        return i_f, i_r, qb

    def currents(self, vbe, vbc, gmin=GMIN):
        """(ic, ib) into c', b' for NPN-sense internal junction voltages."""
        p, v = self.p, self.vt
        i_f, i_r, qb = self._parts(vbe, vbc)
        ibe2 = p["ISE"] * expm1(vbe / (p["NE"] * v)) if p["ISE"] else 0.0
        ibc2 = p["ISC"] * expm1(vbc / (p["NC"] * v)) if p["ISC"] else 0.0
        ic = (i_f - i_r) / qb - i_r / p["BR"] - ibc2 - gmin * vbc
        ib = i_f / p["BF"] + ibe2 + i_r / p["BR"] + ibc2 + gmin * (vbe + vbc)
        return ic, ib

    def transport(self, vbe, vbc):
        i_f, i_r, qb = self._parts(vbe, vbc)
        return (i_f - i_r) / qb

    def rbb(self, vbe, vbc):
        p = self.p
        if math.isinf(p["IRB"]):
            return p["RBM"] + (p["RB"] - p["RBM"]) / self._parts(vbe, vbc)[2]
        x = self.currents(vbe, vbc, 0.0)[1] / p["IRB"]
        if x <= 0.0:
            return p["RB"]
        z = (-1.0 + math.sqrt(1.0 + 144.0 * x / math.pi ** 2)) / (
            (24.0 / math.pi ** 2) * math.sqrt(x))
        return p["RBM"] + 3.0 * (p["RB"] - p["RBM"]) * (math.tan(z) - z) / (
            z * math.tan(z) ** 2)

    # --- charges ----------------------------------------------------------------------------
    @staticmethod
    def depletion(v, cj, vj, m, fc):
        """The depletion charge, integrated in closed form (checked against quad by
        depletion_by_quad in the tests)."""
        if cj == 0.0:
            return 0.0
        vf = fc * vj
        u = min(v, vf)
        q = cj * vj * (1.0 - (1.0 - u / vj) ** (1.0 - m)) / (1.0 - m)
        if v > vf:
            q += cj * (1.0 - fc) ** -(1.0 + m) * ((1.0 - fc * (1.0 + m)) * (v - vf)
                                                  + m / (2.0 * vj) * (v * v - vf * vf))
        return q

    @staticmethod
    def depletion_by_quad(v, cj, vj, m, fc):
        if cj == 0.0:
            return 0.0

        def c(u):
            if u < fc * vj:
                return cj * (1.0 - u / vj) ** -m
            return cj * (1.0 - fc) ** -(1.0 + m) * (1.0 - fc * (1.0 + m) + m * u / vj)
        knots = [fc * vj] if min(0.0, v) < fc * vj < max(0.0, v) else None
        return quad(c, 0.0, v, points=knots, epsabs=0.0, epsrel=1e-13, limit=200)[0]

    def charges(self, vbe, vbc, vbx, vsc, split):
        """q_be, q_bc, q_bx, q_cs (NPN sense); split: part of CJC at the external base."""
        p = self.p
        i_f, i_r, qb = self._parts(vbe, vbc)
        cjc_in = p["XCJC"] * p["CJC"] if split else p["CJC"]
        w = 1.0 if p["ITF"] == 0.0 else (i_f / (i_f + p["ITF"]) if i_f > 0.0 else 0.0)
        tf_eff = p["TF"] * (1.0 + p["XTF"] * w * w * math.exp(vbc / (1.44 * p["VTF"])))
        qbe = self.depletion(vbe, p["CJE"], p["VJE"], p["MJE"], p["FC"]) + tf_eff * i_f / qb
        qbc = self.depletion(vbc, cjc_in, p["VJC"], p["MJC"], p["FC"]) + p["TR"] * i_r
        qbx = self.depletion(vbx, (1.0 - p["XCJC"]) * p["CJC"], p["VJC"], p["MJC"],
                             p["FC"]) if split else 0.0
        qcs = self.depletion(vsc, p["CJS"], p["VJS"], p["MJS"], 0.0)
        return qbe, qbc, qbx, qcs


def deriv(f, x, h):
    """Richardson-extrapolated central difference (error O(h^4))."""
    d1 = (f(x + h) - f(x - h)) / (2 * h)
    d2 = (f(x + h / 2) - f(x - h / 2)) / h
    return (4.0 * d2 - d1) / 3.0


class Net:
    """Nodes '0' (ground) and fixed-voltage nodes (ideal sources to ground), resistors,
    capacitors and Gummel-Poon transistors with their internal nodes."""

    def __init__(self, temp_c=27.0):
        self.temp_c = temp_c
        self.fixed = {"0": (0.0, 0.0, None)}  # node: (dc, ac, wave(t) or None)
        self.res, self.caps, self.bjts = [], [], []
        self.nodes = []

    def _node(self, n):
        if n not in self.fixed and n not in self.nodes:
            self.nodes.append(n)

    def vsrc(self, node, dc, ac=0.0, wave=None):
        self.fixed[node] = (dc, ac, wave)

    def r(self, a, b, ohm):
        self._node(a), self._node(b)
        self.res.append((a, b, ohm))

    def c(self, a, b, f):
        self._node(a), self._node(b)
        self.caps.append((a, b, f))

    def q(self, name, c, b, e, s, dev):
        for n in (c, b, e, s):
            self._node(n)
        p = dev.p
        ci = name + ".c" if p["RC"] > 0 else c
        bi = name + ".b" if p["RB"] > 0 else b
        ei = name + ".e" if p["RE"] > 0 else e
        for n in (ci, bi, ei):
            self._node(n)
        split = p["RB"] > 0 and p["XCJC"] < 1.0 and p["CJC"] > 0
        self.bjts.append(dict(name=name, ext=(c, b, e, s), intn=(ci, bi, ei), dev=dev,
                              split=split))

    # --- evaluation over a full voltage dict ---------------------------------------------
    def volts(self, x, t=None, ac=False):
        v = {}
        for n, (dc, a, wave) in self.fixed.items():
            v[n] = a if ac else (wave(t) if (wave and t is not None) else dc)
        for i, n in enumerate(self.nodes):
            v[n] = x[i]
        return v

    def _jv(self, b, v):
        dev = b["dev"]
        pol = dev.pol
        c, bb, e, s = b["ext"]
        ci, bi, ei = b["intn"]
        vbe = pol * (v[bi] - v[ei])
        vbc = pol * (v[bi] - v[ci])
        vbx = pol * (v[bb] - v[ci])
        vsc = pol * (v[s] - v[ci])
        return vbe, vbc, vbx, vsc

    def current(self, x, t=None):
        """Sum of currents leaving each unknown node through the elements (DC part)."""
        v = self.volts(x, t)
        out = dict((n, 0.0) for n in self.nodes)

        def add(n, i):
            if n in out:
                out[n] += i
        for a, b, ohm in self.res:
            i = (v[a] - v[b]) / ohm
            add(a, i), add(b, -i)
        for bj in self.bjts:
            dev = bj["dev"]
            c, bb, e, s = bj["ext"]
            ci, bi, ei = bj["intn"]
            vbe, vbc, _, _ = self._jv(bj, v)
            ic, ib = dev.currents(vbe, vbc)
            ic, ib = dev.pol * ic, dev.pol * ib
            add(ci, ic), add(bi, ib), add(ei, -(ic + ib))
            p = dev.p
            for ext, inn, r in ((c, ci, p["RC"]), (e, ei, p["RE"])):
                if r > 0:
                    add(ext, (v[ext] - v[inn]) / r), add(inn, -(v[ext] - v[inn]) / r)
            if p["RB"] > 0:
                i = (v[bb] - v[bi]) / dev.rbb(vbe, vbc)
                add(bb, i), add(bi, -i)
        return np.array([out[n] for n in self.nodes])

    def charge(self, x, t=None, volts=None):
        """Sum of the charges on each unknown node (each element's charge on its + node)."""
        v = volts if volts is not None else self.volts(x, t)
        out = dict((n, 0.0) for n in self.nodes)

        def add(a, b, qv):
            if a in out:
                out[a] += qv
            if b in out:
                out[b] -= qv
        for a, b, f in self.caps:
            add(a, b, f * (v[a] - v[b]))
        for bj in self.bjts:
            pol = bj["dev"].pol
            c, bb, e, s = bj["ext"]
            ci, bi, ei = bj["intn"]
            qbe, qbc, qbx, qcs = bj["dev"].charges(*self._jv(bj, v), bj["split"])
            add(bi, ei, pol * qbe), add(bi, ci, pol * qbc)
            add(bb, ci, pol * qbx), add(s, ci, pol * qcs)
        return np.array([out[n] for n in self.nodes])

    # --- analyses -------------------------------------------------------------------------
    def op(self, x0):
        f = lambda x: self.current(x) * 1e3
        sol = root(f, np.asarray(x0, float), method="hybr", options={"xtol": 1e-15,
                                                                       "maxfev": 50000})
        x = sol.x
        for _ in range(3):  # Newton polish with the difference Jacobian
            j = self.jac(self.current, x)
            x = x - np.linalg.solve(j, self.current(x))
        res = np.max(np.abs(self.current(x)))
        if res > 1e-15:
            raise RuntimeError("reference operating point: |KCL| %.3g A" % res)
        return x

    def jac(self, fun, x, h=1e-5):
        n = len(x)
        j = np.zeros((n, n))
        for k in range(n):
            def g(u, k=k):
                y = np.array(x, float)
                y[k] = u
                return fun(y)
            j[:, k] = deriv(g, x[k], h)
        return j

    def fixed_jac(self, fun, x, h=1e-5):
        """d fun / d (each fixed node's voltage) at x: the excitation columns."""
        cols = {}
        for n in self.fixed:
            if n == "0":
                continue
            def g(u, n=n):
                save = self.fixed[n]
                self.fixed[n] = (u, save[1], None)
                try:
                    return fun(x)
                finally:
                    self.fixed[n] = save
            cols[n] = deriv(g, self.fixed[n][0], h)
        return cols

    def ac(self, x, freqs, inject=None):
        """Node phasors (dict node -> array over freqs) for the fixed nodes' AC values; with
        inject, for 1 A into that node with every source's AC value 0 instead."""
        g = self.jac(self.current, x)
        cm = self.jac(self.charge, x, h=1e-4)
        gf = self.fixed_jac(self.current, x)
        cf = self.fixed_jac(self.charge, x, h=1e-4)
        idx = dict((n, i) for i, n in enumerate(self.nodes))
        res = dict((n, np.zeros(len(freqs), complex)) for n in self.nodes)
        for k, f in enumerate(freqs):
            w = 2 * math.pi * f
            y = g + 1j * w * cm
            rhs = np.zeros(len(self.nodes), complex)
            if inject is None:
                for n, col in gf.items():
                    rhs -= (col + 1j * w * cf[n]) * self.fixed[n][1]
            else:
                rhs[idx[inject]] = 1.0
            self._excess_phase(y, rhs, x, w, idx, inject is None)
            sol = np.linalg.solve(y, rhs)
            for n, i in idx.items():
                res[n][k] = sol[i]
        return res

    def _excess_phase(self, y, rhs, x, w, idx, driven=True):
        """Delays the transport transconductance d((IF - IR)/qb)/dVbe by PTF (pi/180) TF."""
        v = self.volts(x)
        for bj in self.bjts:
            p, dev = bj["dev"].p, bj["dev"]
            if p["PTF"] <= 0.0 or p["TF"] <= 0.0:
                continue
            vbe, vbc, _, _ = self._jv(bj, v)
            gm = deriv(lambda u: dev.transport(u, vbc), vbe, 1e-5)
            dgm = gm * (np.exp(-1j * w * p["PTF"] * math.pi / 180.0 * p["TF"]) - 1.0)
            ci, bi, ei = bj["intn"]
            # current into c' (leaving the node c' into the device) += dgm (vb' - ve');
            # the polarity squares away
            for row, sr in ((ci, 1.0), (ei, -1.0)):
                for col, sc in ((bi, 1.0), (ei, -1.0)):
                    if row in idx and col in idx:
                        y[idx[row], idx[col]] += sr * sc * dgm
                    elif row in idx and col in self.fixed and driven:
                        rhs[idx[row]] -= sr * sc * dgm * self.fixed[col][1]

    def tran(self, x0, tstop, h):
        """Fixed-step trapezoidal rule on current(x, t) + d charge(x, t)/dt = 0."""
        n_steps = int(round(tstop / h))
        ts, xs = [0.0], [np.array(x0, float)]
        x = np.array(x0, float)
        q_old = self.charge(x, 0.0)
        i_old = self.current(x, 0.0)
        for k in range(1, n_steps + 1):
            t = k * h
            f = lambda y: (self.current(y, t) + i_old) * 0.5 * h + (self.charge(y, t) - q_old)
            sol = root(lambda y: f(y) * 1e6, x, method="hybr", options={"xtol": 1e-13})
            x = sol.x
            q_old, i_old = self.charge(x, t), self.current(x, t)
            ts.append(t)
            xs.append(x.copy())
        return np.array(ts), np.array(xs)


# --- running the program ------------------------------------------------------------------
def run(binary, name, text, keep):
    d = tempfile.mkdtemp(prefix="ssgp_%s_" % name)
    keep.append(d)
    cir = os.path.join(d, name + ".cir")
    with open(cir, "w") as f:
        f.write(text)
    out = os.path.join(d, "out")
    p = subprocess.run([binary, "run", cir, "-o", out], capture_output=True, text=True,
                       timeout=300)
    if p.returncode != 0:
        raise RuntimeError("%s: exit %d: %s" % (name, p.returncode, p.stderr.strip()))
    return out


def read_csv(path):
    with open(path, newline="") as f:
        rows = list(csv.reader(f))
    head = rows[0]
    return dict((h, np.array([float(r[i]) for r in rows[1:]])) for i, h in enumerate(head))


def read_op(out):
    with open(os.path.join(out, "op.csv"), newline="") as f:
        return dict((r[0], float(r[1])) for r in list(csv.reader(f))[1:] if r)
