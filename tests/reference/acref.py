"""Helpers for the independent AC / stage-figure reference checks (test_ac_*.py).

Nothing here knows how the C solver works. It
  * runs the `stagesim` binary on a netlist (`stagesim run NETLIST -o DIR`) and reads the
    CSV files it writes (op.csv, ac.csv, stage.csv, stage_summary.csv);
  * holds a small circuit description (R C L V I D Q elements, .model cards, .temp, .ac,
    .stage) that writes the netlist text AND solves the same circuit here, on its own:
      - DC operating point: Kirchhoff current-law residuals written out element by element
        (modified nodal form: node voltages plus one branch current per V source and
        inductor), solved with scipy.optimize.root (method 'hybr') and polished by plain
        Newton steps; the Jacobian is exact to rounding (complex-step derivatives);
      - small-signal AC: the same residual's Jacobian at the operating point (complex
        step) plus j*omega times the capacitance matrix, assembled as a dense complex
        numpy matrix and solved with numpy.linalg.solve at each frequency.

Device equations (as in docs/models.md and docs/netlist.md; the published sources are named
beside each, their exact forms recalled from memory):
  Shockley diode (Shockley 1949): I = IS (exp(V/(N Vt)) - 1), RS a series resistor.
  Gummel-Poon BJT (Gummel & Poon 1970; parameter names of Nagel 1975 / Getreu 1976):
    IF = IS (exp(Vbe/(NF Vt)) - 1)      IR = IS (exp(Vbc/(NR Vt)) - 1)
    q1 = 1/(1 - Vbc/VAF - Vbe/VAR)      q2 = IF/IKF + IR/IKR
    qb = q1/2 (1 + sqrt(1 + 4 q2))
    IC = (IF - IR)/qb - IR/BR - ISC (exp(Vbc/(NC Vt)) - 1)
    IB = IF/BF + ISE (exp(Vbe/(NE Vt)) - 1) + IR/BR + ISC (exp(Vbc/(NC Vt)) - 1)
    RB RE RC plain resistors to internal nodes; PNP reverses voltages and currents.
  GMIN (1e-12 S) across each junction: b'-e', b'-c' and each diode junction.
  Temperature (Getreu 1976 as tabulated by Antognetti & Massobrio; Varshni 1967 for EG(T)),
  r = T/TNOM: IS(T) = IS r^XTI exp((r-1) EG/Vt) (diode: r^(XTI/N), EG/(N Vt)), BF BR times
  r^XTB, ISE(T) = ISE r^-XTB (IS(T)/IS)^(1/NE) (ISC likewise with NC),
  VJ(T) = VJ r - 3 Vt ln r - EG(TNOM) r + EG(T), EG(T) = 1.16 - 7.02e-4 T^2/(T + 1108),
  CJ(T) = CJ (1 + M (4e-4 (T - TNOM) - VJ(T)/VJ + 1)).
  Area multiplies IS IKF IKR ISE ISC CJE CJC (diode IS CJO) and divides RB RE RC (RS).
  Capacitances (Nagel 1975; Getreu 1976; hybrid-pi of Gray & Meyer ch. 1):
    depletion C = CJ (1 - V/VJ)^-M for V < FC VJ, else
              CJ (1 - FC)^-(1+M) (1 - FC (1+M) + M V/VJ);
    BJT Cbe = depletion(CJE, VJE, MJE) + TF d(IF/qb)/dVbe, Cbc = depletion(CJC, VJC, MJC)
    + TR dIR/dVbc, and the cross capacitance of the forward charge on Vbc,
    Cx = d(TF IF/qb)/dVbc = -TF IF/qb^2 dqb/dVbc (b'-e' current per Vbc; Getreu 1976,
    Antognetti & Massobrio 1993 ch. 2: the charge Qf = TF IF/qb differentiated);
    diode Cd = depletion(CJO, VJ, M) + TT gd.
Physics constants: exact 2019-SI k = 1.380649e-23 J/K, q = 1.602176634e-19 C; 0 degC =
273.15 K; default temperature (and TNOM) 27 degC.

Conventions of the tool's files as used here (the project's CLI contract): i(V) is the
current entering the source's + node through the source; an I source drives its current
from n+ through itself to n-; stage gain = V(out) with the stage source at AC 1 and every
other source at AC 0; Zin = V across the source / the current it delivers; Zout = V(out)
for a 1 A test current into out with all sources at zero.

Set STAGESIM_REF_KEEP=1 to keep the temporary folders (their paths are printed).
"""

import csv
import math
import os
import shutil
import subprocess
import sys
import tempfile
import traceback

import numpy as np
from scipy import optimize

K_BOLTZMANN = 1.380649e-23   # J/K, exact (SI 2019)
Q_ELECTRON = 1.602176634e-19  # C, exact (SI 2019)
ZERO_C_K = 273.15            # K, exact
TNOM_C = 27.0                # default nominal and circuit temperature, degC
GMIN = 1e-12                 # S, across every junction
HALF_POWER = 1.0 / math.sqrt(2.0)
HALF_POWER_DB = -10.0 * math.log10(2.0)


def vt_at(temp_k):
    """Thermal voltage kT/q in volts."""
    return K_BOLTZMANN * temp_k / Q_ELECTRON


def fmt(x):
    """A number for a netlist, exact when read back (17 significant digits)."""
    return "%.17g" % float(x)


# ---------------------------------------------------------------------------------------
# Pass / fail bookkeeping


class Checker:
    def __init__(self):
        self.passed = 0
        self.failed = 0
        self.tmpdirs = []

    def _count(self, ok):
        if ok:
            self.passed += 1
        else:
            self.failed += 1
        return ok

    def rel(self, name, got, expected, rel, source, abs_=0.0):
        """Passes when |got - expected| <= max(abs_, rel |expected|)."""
        if got is None or (isinstance(got, float) and math.isnan(got)):
            print("FAIL %s: missing; expected %.12g  [%s]" % (name, expected, source))
            return self._count(False)
        err = abs(got - expected)
        tol = max(abs_, rel * abs(expected))
        ok = err <= tol
        r = err / abs(expected) if expected != 0 else (float("inf") if err else 0.0)
        print("%s %s: got %.12g expected %.12g (rel err %.3g; tol rel %g abs %g)  [%s]"
              % ("PASS" if ok else "FAIL", name, got, expected, r, rel, abs_, source))
        return self._count(ok)

    def worst(self, name, err, tol, where, source, what="relative error"):
        """A check summarised by its worst error over many values (err <= tol passes)."""
        ok = err <= tol and not math.isnan(err)
        print("%s %s: worst %s %.3g (tol %g)%s  [%s]"
              % ("PASS" if ok else "FAIL", name, what, err, tol,
                 (" at " + where) if where else "", source))
        return self._count(ok)

    def true(self, name, ok, detail, source):
        print("%s %s: %s  [%s]" % ("PASS" if ok else "FAIL", name, detail, source))
        return self._count(bool(ok))

    def range(self, name, got, lo, hi, source):
        if got is None or (isinstance(got, float) and math.isnan(got)):
            print("FAIL %s: missing; expected within [%.6g, %.6g]  [%s]" % (name, lo, hi, source))
            return self._count(False)
        ok = lo <= got <= hi
        print("%s %s: got %.9g expected within [%.9g, %.9g]  [%s]"
              % ("PASS" if ok else "FAIL", name, got, lo, hi, source))
        return self._count(ok)

    def guard(self, body, *args):
        """Runs body(*args); an exception counts as one failed check (and is printed), so
        the summary line and the clean-up still happen."""
        try:
            body(*args)
        except Exception:  # noqa: BLE001 - any crash of a check is a failure to report
            traceback.print_exc(file=sys.stdout)
            print("FAIL %s: raised an exception (above)" % getattr(body, "__name__", "check"))
            self.failed += 1

    def finish(self):
        keep = os.environ.get("STAGESIM_REF_KEEP", "") not in ("", "0")
        for d in self.tmpdirs:
            if keep:
                print("kept %s" % d)
            else:
                shutil.rmtree(d, ignore_errors=True)
        print("%d passed, %d failed" % (self.passed, self.failed))
        sys.stdout.flush()
        sys.exit(1 if self.failed else 0)


def binary_from_argv():
    if len(sys.argv) < 2:
        sys.stderr.write("usage: %s PATH_TO_STAGESIM\n" % sys.argv[0])
        sys.exit(2)
    path = os.path.abspath(sys.argv[1])
    if not os.path.isfile(path) or not os.access(path, os.X_OK):
        sys.stderr.write("%s: stagesim binary not found or not executable: %s\n"
                         % (sys.argv[0], path))
        sys.exit(2)
    return path


# ---------------------------------------------------------------------------------------
# Running the tool and reading its files


class Run:
    """The outcome of one `stagesim run`: exit code, stdout, stderr and the parsed files."""

    def __init__(self, rc, out, err, outdir, cir):
        self.rc, self.stdout, self.stderr, self.outdir, self.cir = rc, out, err, outdir, cir
        self.op = read_kv(os.path.join(outdir, "op.csv"), "quantity")
        self.summary = read_kv(os.path.join(outdir, "stage_summary.csv"), "metric")
        self.ac = read_table(os.path.join(outdir, "ac.csv"))
        self.stage = read_table(os.path.join(outdir, "stage.csv"))


def run_tool(chk, binary, name, netlist_text, extra_args=(), timeout=300):
    d = tempfile.mkdtemp(prefix="ssac_%s_" % name)
    chk.tmpdirs.append(d)
    cir = os.path.join(d, name + ".cir")
    outdir = os.path.join(d, "out")
    os.mkdir(outdir)
    with open(cir, "w") as f:
        f.write(netlist_text)
    cmd = [binary, "run", cir, "-o", outdir] + list(extra_args)
    try:
        p = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout)
        rc, so, se = p.returncode, p.stdout, p.stderr
    except subprocess.TimeoutExpired:
        rc, so, se = -999, "", "timed out after %d s" % timeout
    return Run(rc, so, se, outdir, cir)


def expect_ok(chk, name, run, netlist_text):
    """One check that the run succeeded and wrote its files; prints the netlist if not."""
    ok = run.rc == 0
    chk.true("%s: stagesim exits 0" % name, ok,
             "exit code %d%s" % (run.rc, "" if ok else "; stderr: " + run.stderr.strip()),
             "CLI contract (docs/cli.md): exit 0 = ok")
    if not ok:
        print("     netlist:")
        for line in netlist_text.splitlines():
            print("       | " + line)
    return ok


def read_kv(path, first):
    """A two-column `first,value` CSV -> {name: float or None (empty cell)}."""
    if not os.path.isfile(path):
        return None
    with open(path, newline="") as f:
        rows = list(csv.reader(f))
    if not rows or rows[0][0].strip().lower() != first:
        raise ValueError("%s: unexpected header %r" % (path, rows[:1]))
    out = {}
    for row in rows[1:]:
        if not row:
            continue
        v = row[1].strip() if len(row) > 1 else ""
        out[row[0].strip().lower()] = float(v) if v else None
    return out


def read_table(path):
    """A CSV with a header row -> (list of column names, 2-D float array)."""
    if not os.path.isfile(path):
        return None
    with open(path, newline="") as f:
        rows = [r for r in csv.reader(f) if r]
    head = [c.strip().lower() for c in rows[0]]
    data = np.array([[float(c) for c in r] for r in rows[1:]], dtype=float)
    if data.size == 0:
        data = data.reshape(0, len(head))
    return head, data


def column(table, name):
    head, data = table
    return data[:, head.index(name)]


def wrap_deg(d):
    """Angle difference folded into [-180, 180)."""
    return (np.asarray(d) + 180.0) % 360.0 - 180.0


def polar(mag, deg):
    return np.asarray(mag) * np.exp(1j * np.radians(np.asarray(deg)))


# ---------------------------------------------------------------------------------------
# Device models (independent implementation of the equations listed in the docstring)

BJT_DEFAULTS = {
    "is": 1e-16, "bf": 100.0, "nf": 1.0, "vaf": math.inf, "ikf": math.inf, "ise": 0.0,
    "ne": 1.5, "br": 1.0, "nr": 1.0, "var": math.inf, "ikr": math.inf, "isc": 0.0,
    "nc": 2.0, "rb": 0.0, "re": 0.0, "rc": 0.0, "cje": 0.0, "vje": 0.75, "mje": 0.33,
    "cjc": 0.0, "vjc": 0.75, "mjc": 0.33, "fc": 0.5, "tf": 0.0, "tr": 0.0, "xtb": 0.0,
    "xti": 3.0, "eg": 1.11, "tnom": TNOM_C,
}
DIODE_DEFAULTS = {
    "is": 1e-14, "n": 1.0, "rs": 0.0, "cjo": 0.0, "vj": 1.0, "m": 0.5, "fc": 0.5,
    "tt": 0.0, "xti": 3.0, "eg": 1.11, "tnom": TNOM_C,
}


def eg_varshni(temp_k):
    """Silicon band gap, eV (Varshni 1967 fit)."""
    return 1.16 - 7.02e-4 * temp_k * temp_k / (temp_k + 1108.0)


def vj_cj_at(vj, cj, m, temp_k, tnom_k):
    r = temp_k / tnom_k
    v = vt_at(temp_k)
    vjt = vj * r - 3.0 * v * math.log(r) - eg_varshni(tnom_k) * r + eg_varshni(temp_k)
    return vjt, cj * (1.0 + m * (4e-4 * (temp_k - tnom_k) - vjt / vj + 1.0))


def bjt_params_at(card, area, temp_k):
    p = dict(BJT_DEFAULTS)
    p.update(card)
    tnom_k = p["tnom"] + ZERO_C_K
    r = temp_k / tnom_k
    v = vt_at(temp_k)
    ratio = r ** p["xti"] * math.exp((r - 1.0) * p["eg"] / v)
    q = dict(p)
    q["is"] = p["is"] * ratio * area
    q["bf"] = p["bf"] * r ** p["xtb"]
    q["br"] = p["br"] * r ** p["xtb"]
    q["ise"] = p["ise"] * r ** (-p["xtb"]) * ratio ** (1.0 / p["ne"]) * area
    q["isc"] = p["isc"] * r ** (-p["xtb"]) * ratio ** (1.0 / p["nc"]) * area
    q["ikf"] = p["ikf"] * area
    q["ikr"] = p["ikr"] * area
    q["vje"], q["cje"] = vj_cj_at(p["vje"], p["cje"], p["mje"], temp_k, tnom_k)
    q["vjc"], q["cjc"] = vj_cj_at(p["vjc"], p["cjc"], p["mjc"], temp_k, tnom_k)
    q["cje"] *= area
    q["cjc"] *= area
    for k in ("rb", "re", "rc"):
        q[k] = p[k] / area
    return q


def diode_params_at(card, area, temp_k):
    p = dict(DIODE_DEFAULTS)
    p.update(card)
    tnom_k = p["tnom"] + ZERO_C_K
    r = temp_k / tnom_k
    v = vt_at(temp_k)
    q = dict(p)
    q["is"] = p["is"] * r ** (p["xti"] / p["n"]) * math.exp((r - 1.0) * p["eg"] / (p["n"] * v)) * area
    q["vj"], q["cjo"] = vj_cj_at(p["vj"], p["cjo"], p["m"], temp_k, tnom_k)
    q["cjo"] *= area
    q["rs"] = p["rs"] / area
    return q


def _expm1(z):
    """exp(z) - 1 that also carries a complex-step perturbation exactly."""
    if np.iscomplexobj(z):
        return np.expm1(z.real) + 1j * np.exp(z.real) * z.imag
    return np.expm1(z)


def _inv(x):
    return 0.0 if math.isinf(x) else 1.0 / x


def depletion_cap(v, cj, vj, m, fc):
    if cj == 0.0:
        return 0.0
    if v < fc * vj:
        return cj * (1.0 - v / vj) ** (-m)
    return cj * (1.0 - fc) ** (-(1.0 + m)) * (1.0 - fc * (1.0 + m) + m * v / vj)


def gp_currents(p, vt, vbe, vbc):
    """Gummel-Poon currents into collector and base (NPN sense), with GMIN; also IF/qb and
    IR (for the diffusion capacitances). Works with complex-step arguments."""
    i_f = p["is"] * _expm1(vbe / (p["nf"] * vt))
    i_r = p["is"] * _expm1(vbc / (p["nr"] * vt))
    q1 = 1.0 / (1.0 - vbc * _inv(p["vaf"]) - vbe * _inv(p["var"]))
    q2 = i_f * _inv(p["ikf"]) + i_r * _inv(p["ikr"])
    qb = 0.5 * q1 * (1.0 + np.sqrt(1.0 + 4.0 * q2))
    ibe2 = p["ise"] * _expm1(vbe / (p["ne"] * vt))
    ibc2 = p["isc"] * _expm1(vbc / (p["nc"] * vt))
    ic = (i_f - i_r) / qb - i_r / p["br"] - ibc2 - GMIN * vbc
    ib = i_f / p["bf"] + ibe2 + i_r / p["br"] + ibc2 + GMIN * (vbe + vbc)
    return ic, ib, i_f / qb, i_r


H_CS = 1e-30  # complex-step size


def dstep(f, x):
    """df/dx by complex step (exact to rounding for analytic f)."""
    return (f(x + 1j * H_CS)).imag / H_CS


# ---------------------------------------------------------------------------------------
# Circuit description: writes the netlist and solves the same circuit here


class Circuit:
    def __init__(self, title, temp_c=None):
        self.title = title
        self.temp_c = temp_c
        self.elems = []
        self.models = {}
        self.ac = None
        self.stage = None
        self.options = []
        self.guess = {}

    # elements (names and nodes lower case, as the tool folds them)
    def _add(self, kind, name, nodes, **kw):
        e = dict(kind=kind, name=name.lower(), nodes=[n.lower() for n in nodes])
        e.update(kw)
        self.elems.append(e)
        return e

    def R(self, name, a, b, ohm):
        return self._add("r", name, [a, b], value=float(ohm))

    def C(self, name, a, b, farad):
        return self._add("c", name, [a, b], value=float(farad))

    def L(self, name, a, b, henry):
        return self._add("l", name, [a, b], value=float(henry))

    def V(self, name, a, b, dc, ac=0.0, ac_deg=0.0):
        return self._add("v", name, [a, b], value=float(dc), ac=float(ac), ac_deg=float(ac_deg))

    def I(self, name, a, b, dc, ac=0.0, ac_deg=0.0):
        return self._add("i", name, [a, b], value=float(dc), ac=float(ac), ac_deg=float(ac_deg))

    def D(self, name, a, k, model, area=1.0):
        return self._add("d", name, [a, k], model=model.lower(), area=float(area))

    def Q(self, name, c, b, e, model, area=1.0):
        return self._add("q", name, [c, b, e], model=model.lower(), area=float(area))

    def model(self, name, kind, **params):
        self.models[name.lower()] = (kind.lower(), {k.lower(): float(v) for k, v in params.items()})

    def set_ac(self, kind, n, f1, f2):
        self.ac = (kind, n, float(f1), float(f2))

    def set_stage(self, src, out):
        self.stage = (src.lower(), out.lower())

    # netlist text
    def netlist(self, extra_lines=()):
        out = [self.title]
        for e in self.elems:
            n = " ".join(e["nodes"])
            k = e["kind"]
            if k in "rcl":
                out.append("%s %s %s" % (e["name"], n, fmt(e["value"])))
            elif k in "vi":
                s = "%s %s DC %s" % (e["name"], n, fmt(e["value"]))
                if e["ac"] != 0.0 or e["ac_deg"] != 0.0:
                    s += " AC %s %s" % (fmt(e["ac"]), fmt(e["ac_deg"]))
                out.append(s)
            else:
                s = "%s %s %s" % (e["name"], n, e["model"])
                if e["area"] != 1.0:
                    s += " " + fmt(e["area"])
                out.append(s)
        for name, (kind, params) in self.models.items():
            out.append(".model %s %s (%s)" % (name, kind.upper(), " ".join(
                "%s=%s" % (k.upper(), fmt(v)) for k, v in params.items())))
        if self.temp_c is not None:
            out.append(".temp %s" % fmt(self.temp_c))
        if self.ac:
            out.append(".ac %s %d %s %s" % (self.ac[0], self.ac[1], fmt(self.ac[2]), fmt(self.ac[3])))
        if self.stage:
            out.append(".stage in=%s out=%s" % self.stage)
        out.extend(self.options)
        out.extend(extra_lines)
        out.append(".end")
        return "\n".join(out) + "\n"

    # ---- the independent solution ---------------------------------------------------
    def build(self):
        """Numbers the unknowns: user nodes (order of first appearance), internal nodes,
        then one branch current per V source and inductor."""
        self.temp_k = (TNOM_C if self.temp_c is None else self.temp_c) + ZERO_C_K
        self.vt = vt_at(self.temp_k)
        idx = {}
        user = []
        for e in self.elems:
            for nd in e["nodes"]:
                if nd not in ("0", "gnd") and nd not in idx:
                    idx[nd] = len(idx)
                    user.append(nd)
        self.user_nodes = user
        for e in self.elems:
            e["u"] = [idx.get(nd, -1) for nd in e["nodes"]]
            if e["kind"] == "q":
                e["p"] = bjt_params_at(self.models[e["model"]][1], e["area"], self.temp_k)
                e["pol"] = -1.0 if self.models[e["model"]][0] == "pnp" else 1.0
                inner = []
                for t, key in enumerate(("rc", "rb", "re")):
                    if e["p"][key] > 0.0:
                        idx["%s#%d" % (e["name"], t)] = len(idx)
                        inner.append(len(idx) - 1)
                    else:
                        inner.append(e["u"][t])
                e["ui"] = inner
            elif e["kind"] == "d":
                e["p"] = diode_params_at(self.models[e["model"]][1], e["area"], self.temp_k)
                if e["p"]["rs"] > 0.0:
                    idx["%s#a" % e["name"]] = len(idx)
                    e["ui"] = [len(idx) - 1, e["u"][1]]
                else:
                    e["ui"] = list(e["u"])
        self.n_nodes = len(idx)
        n = self.n_nodes
        for e in self.elems:
            if e["kind"] in "vl":
                e["k"] = n
                n += 1
        self.n = n
        self.node_index = idx
        self.src = {e["name"]: e for e in self.elems}

    def residual(self, x, scale=1.0):
        """KCL (sum of currents leaving each node through its elements) and the branch
        equations of V sources and inductors; independent sources scaled by `scale`."""
        F = np.zeros(self.n, dtype=x.dtype)
        zero = x[0] * 0.0

        def v(u):
            return x[u] if u >= 0 else zero

        def leave(u, i):
            if u >= 0:
                F[u] += i

        def res(a, b, g):
            i = (v(a) - v(b)) * g
            leave(a, i)
            leave(b, -i)

        for e in self.elems:
            k = e["kind"]
            a, b = e["u"][0], e["u"][1]
            if k == "r":
                res(a, b, 1.0 / e["value"])
            elif k in "vl":
                br = e["k"]
                leave(a, x[br])
                leave(b, -x[br])
                F[br] = v(a) - v(b) - (e["value"] * scale if k == "v" else 0.0)
            elif k == "i":
                leave(a, e["value"] * scale)
                leave(b, -e["value"] * scale)
            elif k == "d":
                p = e["p"]
                ai, kk = e["ui"]
                if ai != a:
                    res(a, ai, 1.0 / p["rs"])
                vd = v(ai) - v(kk)
                i = p["is"] * _expm1(vd / (p["n"] * self.vt)) + GMIN * vd
                leave(ai, i)
                leave(kk, -i)
            elif k == "q":
                p, pol = e["p"], e["pol"]
                ci, bi, ei = e["ui"]
                for t, key in enumerate(("rc", "rb", "re")):
                    if e["ui"][t] != e["u"][t]:
                        res(e["u"][t], e["ui"][t], 1.0 / p[key])
                vbe = pol * (v(bi) - v(ei))
                vbc = pol * (v(bi) - v(ci))
                ic, ib, _, _ = gp_currents(p, self.vt, vbe, vbc)
                leave(ci, pol * ic)
                leave(bi, pol * ib)
                leave(ei, -pol * (ic + ib))
        return F

    def jacobian(self, x, scale=1.0):
        J = np.zeros((self.n, self.n))
        for j in range(self.n):
            xc = x.astype(complex)
            xc[j] += 1j * H_CS
            J[:, j] = self.residual(xc, scale).imag / H_CS
        return J

    def initial_guess(self):
        x = np.zeros(self.n)
        for name, u in self.node_index.items():
            if name in self.guess:
                x[u] = self.guess[name]
        for e in self.elems:
            if e["kind"] == "q":
                for t in range(3):
                    if e["ui"][t] != e["u"][t] and e["u"][t] >= 0:
                        x[e["ui"][t]] = x[e["u"][t]]
            if e["kind"] == "d" and e["ui"][0] != e["u"][0] and e["u"][0] >= 0:
                x[e["ui"][0]] = x[e["u"][0]]
        return x

    def solve_op(self):
        """scipy.optimize.root (hybr) on the residual from the hand-estimated guess (source
        stepping if that fails), then plain Newton polish with the exact Jacobian."""
        self.build()
        x0 = self.initial_guess()

        def fun(x, s=1.0):
            return self.residual(x, s), self.jacobian(x, s)

        # trial steps far from the answer may overflow an exponential; hybr then shortens
        # the step, so those floating-point warnings are expected and silenced here
        with np.errstate(over="ignore", invalid="ignore"):
            sol = optimize.root(fun, x0, jac=True, method="hybr", options={"xtol": 1e-14})
            x = sol.x
            # judged by the residual: hybr may report "no progress" at the rounding floor
            if not np.all(np.abs(self.residual(x)) < 1e-10):
                x = x0
                for s in np.linspace(0.02, 1.0, 50):
                    sol = optimize.root(lambda y: fun(y, s), x, jac=True, method="hybr",
                                        options={"xtol": 1e-14})
                    x = sol.x
        for _ in range(30):
            dx = np.linalg.solve(self.jacobian(x), -self.residual(x))
            x = x + dx
            if np.max(np.abs(dx) / (np.abs(x) + 1e-3)) < 1e-15:
                break
        r = self.residual(x)
        node_res = np.max(np.abs(r[:self.n_nodes]))
        if node_res > 1e-13 or np.max(np.abs(r[self.n_nodes:]), initial=0.0) > 1e-12:
            raise RuntimeError("%s: own operating point not found (residual %.3g A)"
                               % (self.title, node_res))
        self.x_op = x
        self.J = self.jacobian(x)
        self.Cm = self._cap_matrix(x)
        return x

    def _cap_matrix(self, x):
        C = np.zeros((self.n, self.n))

        def cap(a, b, c):
            for (r_, s_, sg) in ((a, a, 1), (b, b, 1), (a, b, -1), (b, a, -1)):
                if r_ >= 0 and s_ >= 0:
                    C[r_, s_] += sg * c

        def v(u):
            return x[u] if u >= 0 else 0.0

        self.caps = {}
        for e in self.elems:
            k = e["kind"]
            if k == "c":
                cap(e["u"][0], e["u"][1], e["value"])
            elif k == "l":
                C[e["k"], e["k"]] -= e["value"]
            elif k == "d":
                p = e["p"]
                ai, kk = e["ui"]
                vd = v(ai) - v(kk)
                gd = p["is"] * math.exp(vd / (p["n"] * self.vt)) / (p["n"] * self.vt)
                cd = depletion_cap(vd, p["cjo"], p["vj"], p["m"], p["fc"]) + p["tt"] * gd
                self.caps[e["name"]] = dict(vd=vd, cd=cd, gd=gd)
                cap(ai, kk, cd)
            elif k == "q":
                p, pol = e["p"], e["pol"]
                ci, bi, ei = e["ui"]
                vbe = pol * (v(bi) - v(ei))
                vbc = pol * (v(bi) - v(ci))
                cbe = depletion_cap(vbe, p["cje"], p["vje"], p["mje"], p["fc"])
                cbc = depletion_cap(vbc, p["cjc"], p["vjc"], p["mjc"], p["fc"])
                cbe += p["tf"] * dstep(lambda z: gp_currents(p, self.vt, z, vbc)[2], vbe)
                # the forward charge TF IF/qb also depends on Vbc through qb (VAF, IKR):
                # d(TF IF/qb)/dVbc = -TF IF/qb^2 dqb/dVbc, a b'-e' current per Vbc
                cx = p["tf"] * dstep(lambda z: gp_currents(p, self.vt, vbe, z)[2], vbc)
                cbc += p["tr"] * dstep(lambda z: gp_currents(p, self.vt, vbe, z)[3], vbc)
                gm = dstep(lambda z: gp_currents(p, self.vt, z, vbc)[0], vbe)
                self.caps[e["name"]] = dict(vbe=vbe, vbc=vbc, cbe=cbe, cbc=cbc, gm=gm)
                cap(bi, ei, cbe)
                cap(bi, ci, cbc)
                for r_, sg in ((bi, 1), (ei, -1)):  # rows b', e'; columns b' (+), c' (-)
                    if r_ >= 0:
                        if bi >= 0:
                            C[r_, bi] += sg * cx
                        if ci >= 0:
                            C[r_, ci] -= sg * cx
        return C

    # ---- small-signal solves ---------------------------------------------------------
    def ymatrix(self, freq_hz):
        return self.J + 1j * 2.0 * math.pi * freq_hz * self.Cm

    def excitation(self, only=None):
        """Right-hand side: each source's AC phasor (all at their netlist values), or the
        named source alone at AC 1 (the stage convention)."""
        rhs = np.zeros(self.n, dtype=complex)
        for e in self.elems:
            if e["kind"] not in "vi":
                continue
            if only is None:
                ph = e["ac"] * np.exp(1j * math.radians(e["ac_deg"]))
            else:
                ph = 1.0 if e["name"] == only else 0.0
            if e["kind"] == "v":
                rhs[e["k"]] += ph
            else:  # current from n+ through the source to n-: leaves n+, enters n-
                a, b = e["u"]
                if a >= 0:
                    rhs[a] -= ph
                if b >= 0:
                    rhs[b] += ph
        return rhs

    def ac_solution(self, freq_hz):
        return np.linalg.solve(self.ymatrix(freq_hz), self.excitation())

    def stage_point(self, freq_hz, src=None, out=None):
        """(gain, zin, zout) complex, by the stage definitions."""
        src = src or self.stage[0]
        out = out or self.stage[1]
        Y = self.ymatrix(freq_hz)
        x = np.linalg.solve(Y, self.excitation(only=src))
        uo = self.node_index[out]
        e = self.src[src]
        if e["kind"] == "v":
            with np.errstate(divide="ignore", invalid="ignore"):  # open input at 0 Hz: inf
                zin = 1.0 / (-x[e["k"]])
        else:
            a, b = e["u"]
            va = x[a] if a >= 0 else 0.0
            vb = x[b] if b >= 0 else 0.0
            zin = vb - va
        rhs = np.zeros(self.n, dtype=complex)
        rhs[uo] = 1.0
        zout = np.linalg.solve(Y, rhs)[uo]
        return x[uo], zin, zout

    def gain_mag(self, freq_hz):
        return abs(self.stage_point(freq_hz)[0])

    def corner(self, f_a, f_b, target):
        """The frequency between f_a and f_b where |gain| = target (brentq in log f)."""
        g = lambda lf: self.gain_mag(math.exp(lf)) - target
        return math.exp(optimize.brentq(g, math.log(f_a), math.log(f_b), xtol=1e-15, rtol=1e-14))

    def peak(self, f_a, f_b):
        """The largest |gain| between f_a and f_b (bounded Brent search in log f)."""
        r = optimize.minimize_scalar(lambda lf: -self.gain_mag(math.exp(lf)),
                                     bounds=(math.log(f_a), math.log(f_b)), method="bounded",
                                     options={"xatol": 1e-12})
        return math.exp(r.x), -r.fun

    def stage_summary(self, freqs):
        """Mid-band, corners and bandwidth by the stage definitions: mid-band = the largest
        |gain| (the grid maximum, refined between its grid neighbours when it is not at an
        end of the sweep); corners where |gain| = mid-band/sqrt(2), searched outward from
        the grid maximum; bandwidth f_high - f_low, or f_high when the DC gain is within
        3 dB of mid-band."""
        g = np.array([self.gain_mag(f) for f in freqs])
        k = int(np.argmax(g))
        f_mid, g_mid = freqs[k], g[k]
        if 0 < k < len(freqs) - 1:
            fp, gp = self.peak(freqs[k - 1], freqs[k + 1])
            if gp > g_mid:
                f_mid, g_mid = fp, gp
        target = g_mid * HALF_POWER
        f_low = f_high = None
        for j in range(k, 0, -1):
            if g[j - 1] < target:
                f_low = self.corner(freqs[j - 1], freqs[j], target)
                break
        for j in range(k, len(freqs) - 1):
            if g[j + 1] < target:
                f_high = self.corner(freqs[j], freqs[j + 1], target)
                break
        bw = None
        if f_low is not None and f_high is not None:
            bw = f_high - f_low
        elif f_low is None and f_high is not None:
            if abs(self.stage_point(0.0)[0]) >= target:
                bw = f_high
        _, zin, zout = self.stage_point(f_mid)
        return dict(gain_mid_db=20.0 * math.log10(g_mid), f_mid_hz=f_mid, f_low_hz=f_low,
                    f_high_hz=f_high, bandwidth_hz=bw, zin_mid_ohm=abs(zin),
                    zout_mid_ohm=abs(zout), grid_mid_hz=freqs[k]), g
