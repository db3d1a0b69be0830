"""Studies: sweeps and tolerance runs over one netlist (docs/studies.md)."""
import ctypes
import os

from . import _lib, _tables
from ._lib import lib, call


class Study(_lib.Owned):
    """A sweep (add_vary) and/or tolerance run (add_tolerance, trials) of a netlist file:
    run() gives one row per point (point, swept and sampled values, status, every figure)."""

    def __init__(self, netlist_path, sets=None):
        arr, n = _lib.overrides(sets)
        self._h = ctypes.c_void_p()
        self._destroy = lib.ss_study_destroy  # kept: module globals may be gone at exit
        call(lib.ss_study_create, os.fsencode(netlist_path), arr, n, ctypes.byref(self._h))

    def set_stage(self, in_source, out_node):
        call(lib.ss_study_set_stage, self._h, in_source.encode(), out_node.encode())
        return self

    def add_vary(self, spec):
        """`NAME=lin:START:STOP:N`, `NAME=log:...`, `NAME=list:V1,V2,...` (or temp=...)."""
        call(lib.ss_study_add_vary, self._h, spec.encode())
        return self

    def add_tolerance(self, spec):
        """`NAME=5%`, `NAME=5%:gauss`, `NAME=LO..HI`, `NAME=LO..HI:gauss`."""
        call(lib.ss_study_add_tolerance, self._h, spec.encode())
        return self

    def add_match(self, spec):
        """`A,B,...=RHO`: those tolerances drawn correlated (docs/studies.md)."""
        call(lib.ss_study_add_match, self._h, spec.encode())
        return self

    def set_trials(self, trials, seed=1):
        call(lib.ss_study_set_trials, self._h, int(trials), int(seed))
        return self

    def set_threads(self, n_threads):
        call(lib.ss_study_set_threads, self._h, int(n_threads))
        return self

    @property
    def points(self):
        return lib.ss_study_points(self._h)

    def run(self):
        """Solves every point: a structured array, fields named as study.csv's columns."""
        t = ctypes.c_void_p()
        call(lib.ss_study_run, self._h, ctypes.byref(t))
        try:
            return _tables.table_array(t)
        finally:
            _tables.take(t)
