"""Circuits and solver contexts."""
import ctypes
import os
from collections import namedtuple

import numpy as np

from . import _lib, _tables
from ._lib import lib, call

Verdict = namedtuple("Verdict", "quantity measured lower upper margin passed")
Verdict.__doc__ = """One limit judged: the quantity (with "@ FREQ" when it names one), the
measured value, the bounds (NaN when open), the margin to the nearest bound (negative when
failing) and passed (bool)."""


class Circuit(_lib.Owned):
    """A parsed netlist: read-only; make solver contexts of it with solver()."""

    def __init__(self, handle, name):
        self._h = handle  # c_void_p
        self._destroy = lib.ss_circuit_destroy  # kept: module globals may be gone at exit
        self.name = name

    @classmethod
    def from_file(cls, path, sets=None):
        """Parses a netlist file; sets: {NAME: value} as --set NAME=VALUE (a number or text,
        "4.7k", "{2*rb}")."""
        arr, n = _lib.overrides(sets)
        h = ctypes.c_void_p()
        call(lib.ss_circuit_parse_file, os.fsencode(path), arr, n, ctypes.byref(h))
        return cls(h, str(path))

    @classmethod
    def from_text(cls, text, name="<text>", sets=None):
        """Parses netlist text; name stands for the file name in errors."""
        data = text.encode()
        arr, n = _lib.overrides(sets)
        h = ctypes.c_void_p()
        call(lib.ss_circuit_parse_text, data, len(data), name.encode(), arr, n,
             ctypes.byref(h))
        return cls(h, name)

    def solver(self):
        """A new solver context of this circuit."""
        return Solver(self)

    def value(self, name):
        """The value of NAME as parsed (a .param, an element's value or MODEL.PARAM)."""
        out = ctypes.c_double()
        call(lib.ss_circuit_get_value, self._h, name.encode(), ctypes.byref(out))
        return out.value

    @property
    def temp_c(self):
        return lib.ss_circuit_temp_c(self._h)

    def close(self):
        """Frees the circuit now (solvers made of it keep it alive until they go)."""
        super().close()


def _name(text):
    return text.encode()


class Solver(_lib.Owned):
    """A solver context: values by name, temperature, requests and the analyses. Use it as a
    context manager (freed on exit) or let garbage collection free it; it keeps its Circuit
    alive."""

    def __init__(self, circuit):
        self.circuit = circuit  # outlives the context
        self._h = ctypes.c_void_p()
        self._destroy = lib.ss_solver_destroy  # kept: module globals may be gone at exit
        self._labels = {}  # row labels of the op and figures tables, by kind and row count
        call(lib.ss_solver_create, circuit._h, ctypes.byref(self._h))

    # ---- lifetime: close(), `with`, garbage collection (_lib.Owned) ----
    def _handle(self):
        if not self._h.value:
            raise ValueError("stagesim: the solver context is closed")
        return self._h

    # ---- values ----
    def __setitem__(self, name, value):
        call(lib.ss_solver_set_value, self._handle(), name.encode(), float(value))

    def __getitem__(self, name):
        out = ctypes.c_double()
        call(lib.ss_solver_get_value, self._handle(), name.encode(), ctypes.byref(out))
        return out.value

    def reset(self):
        """Every value and the temperature back to the circuit's own."""
        lib.ss_solver_reset_values(self._handle())

    @property
    def temp_c(self):
        return lib.ss_solver_temp_c(self._handle())

    @temp_c.setter
    def temp_c(self, value):
        call(lib.ss_solver_set_temp, self._handle(), float(value))

    @property
    def warnings(self):
        out = []
        while True:
            w = lib.ss_solver_warning(self._handle(), len(out))
            if w is None:
                return out
            out.append(w.decode())

    # ---- requests ----
    def select_nodes(self, names=None):
        """The nodes whose results are written (None: every node)."""
        names = list(names or [])
        arr = (ctypes.c_char_p * max(len(names), 1))(*[n.encode() for n in names])
        self._labels.clear()
        call(lib.ss_solver_select_nodes, self._handle(), arr, len(names))

    def set_stage(self, in_source, out_node):
        self._labels.clear()
        call(lib.ss_solver_set_stage, self._handle(), _name(in_source), _name(out_node))

    def set_load(self, load_ohm):
        self._labels.clear()
        call(lib.ss_solver_set_load, self._handle(), float(load_ohm))

    def set_noise(self, out_node, in_source, rs_resistor=None):
        self._labels.clear()
        call(lib.ss_solver_set_noise, self._handle(), _name(out_node), _name(in_source),
             _name(rs_resistor) if rs_resistor else None)

    # ---- analyses ----
    def op(self):
        """The operating point: {quantity: value} as op.csv lists it."""
        t = ctypes.c_void_p()
        call(lib.ss_op_solve, self._handle(), ctypes.byref(t), None)
        try:
            return self._mapping("op", t)
        finally:
            _tables.take(t)

    def _mapping(self, kind, t):
        """A labelled metric,value table as {label: value}. The labels of a context's op and
        figures tables change only with its requests (nodes, stage, noise): read them once per
        request state and row count (the last one compared each time, as a guard)."""
        rows = lib.ss_table_rows(t)
        labels = self._labels.get((kind, rows))
        if labels is None or (rows and labels[-1].encode() != lib.ss_table_row_label(t, rows - 1)):
            labels = _tables.table_labels(t)
            self._labels[(kind, rows)] = labels
        get = lib.ss_table_get
        return {lab: get(t, r, 0) for r, lab in enumerate(labels)}

    def _emit(self, fn, *extra):
        with _tables.Collector() as c:
            c.run(fn, self._handle(), "SINK", *extra)
            return c.array()

    def dc(self):
        """The .dc sweep: the swept source(s), then v(NODE) per node."""
        return self._emit(lib.ss_dc_sweep_emit)

    def ac(self):
        """The .ac sweep: freq_hz, then vm(NODE), vp(NODE) per node."""
        return self._emit(lib.ss_ac_sweep_emit)

    def tran(self):
        """The .tran analysis: time_s, then v(NODE) per node."""
        return self._emit(lib.ss_tran_emit)

    def stage(self):
        """Stage figures over the .ac frequencies: (array of freq_hz, gain, gain_db,
        phase_deg, zin_ohm, zout_ohm; {metric: value} summary)."""
        summary = ctypes.c_void_p()
        with _tables.Collector() as c:
            c.run(lib.ss_stage_emit, self._handle(), "SINK", ctypes.byref(summary))
            arr = c.array()
        try:
            return arr, _tables.table_mapping(summary)
        finally:
            _tables.take(summary)

    def noise(self):
        """Noise over the .ac frequencies, or over the noise analysis's own band when it has
        one (.noise band=F1..F2): (array of freq_hz, out_noise_v_rthz, in_noise_v_rthz --
        input-referred in A/rtHz when the input is a current source; {metric: value} summary;
        contributions: a structured array with a 'source' field and out_noise_rms_v,
        share_pct, element_share_pct)."""
        summary, contrib = ctypes.c_void_p(), ctypes.c_void_p()
        with _tables.Collector() as c:
            c.run(lib.ss_noise_emit, self._handle(), "SINK", ctypes.byref(summary),
                  ctypes.byref(contrib))
            arr = c.array()
        try:
            summ = _tables.table_mapping(summary)
            labels = _tables.table_labels(contrib)
            names = _tables.table_names(contrib)
            values = _tables.table_matrix(contrib)
            width = max([len(s) for s in labels] + [1])
            dt = np.dtype([("source", f"U{width}")] +
                          [(n, "<f8") for n in _tables.field_names(names)])
            con = np.empty(len(labels), dtype=dt)
            con["source"] = labels
            for i, n in enumerate(dt.names[1:]):
                con[n] = values[:, i]
            return arr, summ, con
        finally:
            _tables.take(summary)
            _tables.take(contrib)

    def figures(self, limits=None):
        """Every figure a study records per point (ss_figures_compute): the op.csv
        quantities, the stage summary (with .ac and a stage) and each QUANTITY@FREQ the
        limits name. {figure: value}."""
        lim = _Limits(limits, self.circuit) if limits is not None else None
        t = ctypes.c_void_p()
        try:
            call(lib.ss_figures_compute, self._handle(), lim._h if lim else None,
                 ctypes.byref(t))
            return self._mapping("figures", t) if lim is None else _tables.table_mapping(t)
        finally:
            _tables.take(t)
            if lim:
                lim.close()

    def check(self, limits=None):
        """Judges the circuit against its .expect lines plus limits (text in the limits
        format, docs/checks.md, or the path of a limits file): a list of Verdict."""
        lim = _Limits(limits, self.circuit)
        figs, verd = ctypes.c_void_p(), ctypes.c_void_p()
        n_failed = ctypes.c_int()
        try:
            call(lib.ss_limits_check_names, lim._h, self._handle())
            call(lib.ss_figures_compute, self._handle(), lim._h, ctypes.byref(figs))
            call(lib.ss_check_evaluate, lim._h, figs, ctypes.byref(verd),
                 ctypes.byref(n_failed))
            names = _tables.table_names(verd)
            m = _tables.table_matrix(verd)
            col = {n: i for i, n in enumerate(names)}
            out = []
            for r, q in enumerate(_tables.table_labels(verd)):
                out.append(Verdict(q, float(m[r, col["measured"]]), float(m[r, col["lower"]]),
                                   float(m[r, col["upper"]]), float(m[r, col["margin"]]),
                                   bool(m[r, col["pass"]] == 1)))
            return out
        finally:
            _tables.take(figs)
            _tables.take(verd)
            lim.close()


class _Limits:
    """An ss_limits of the circuit's .expect lines plus limits text or a limits file."""

    def __init__(self, limits, circuit):
        self._h = ctypes.c_void_p()
        call(lib.ss_limits_create, ctypes.byref(self._h))
        try:
            call(lib.ss_limits_add_circuit, self._h, circuit._h)
            if limits is None:
                pass
            elif isinstance(limits, os.PathLike) or (isinstance(limits, str) and
                                                      "\n" not in limits and
                                                      os.path.isfile(limits)):
                call(lib.ss_limits_add_file, self._h, os.fsencode(limits))
            else:
                call(lib.ss_limits_add_text, self._h, limits.encode(), b"<limits>")
        except BaseException:
            self.close()
            raise

    def close(self):
        if self._h.value:
            lib.ss_limits_destroy(ctypes.byref(self._h))
