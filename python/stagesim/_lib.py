"""Loading libstagesim and declaring the C functions the binding calls (include/stagesim/)."""
import ctypes
import glob
import os

from ctypes import (POINTER, Structure, c_char, c_char_p, c_double, c_int, c_long, c_size_t,
                    c_ulonglong, c_void_p)

__all__ = ["lib", "lib_path", "Error", "ErrorBuf", "call"]

_SONAME = "libstagesim.so.0"


class ErrorBuf(Structure):
    """struct ss_error: code, line, file, message."""
    _fields_ = [("code", c_int), ("line", c_int), ("file", c_char * 256),
                ("message", c_char * 768)]


class Error(Exception):
    """A failed library call: code (the ss_status number), status (its name, "SS_ERR_INPUT"),
    file and line (the netlist location, "" and 0 when none applies) and message."""

    def __init__(self, code, status, file, line, message, text):
        super().__init__(text)
        self.code = code
        self.status = status
        self.file = file
        self.line = line
        self.message = message


def _candidates():
    env = os.environ.get("STAGESIM_LIB")
    if env:
        return [env]
    here = os.path.dirname(os.path.abspath(__file__))
    # installed: PREFIX/lib/python3/dist-packages/stagesim -> PREFIX/lib (or lib/<multiarch>)
    libdir = os.path.normpath(os.path.join(here, "..", "..", ".."))
    found = [os.path.join(libdir, _SONAME)]
    found += sorted(glob.glob(os.path.join(libdir, "*", _SONAME)))
    # the source tree: python/stagesim beside build folders
    root = os.path.normpath(os.path.join(here, "..", ".."))
    found += sorted(glob.glob(os.path.join(root, "build*", _SONAME)))
    found.append(_SONAME)  # the dynamic loader's own search
    return found


def _load():
    tried = []
    for path in _candidates():
        if os.sep in path and not os.path.exists(path):
            tried.append(path)
            continue
        try:
            return ctypes.CDLL(path), path
        except OSError as e:
            tried.append(f"{path} ({e})")
    raise ImportError("stagesim: libstagesim.so.0 not found; set STAGESIM_LIB to its path. "
                      "Tried: " + "; ".join(tried))


lib, lib_path = _load()

# callbacks of ss_sink_callbacks
BEGIN_FN = ctypes.CFUNCTYPE(c_int, c_void_p, c_int, POINTER(c_char_p), c_long)
ROW_FN = ctypes.CFUNCTYPE(c_int, c_void_p, POINTER(c_double), c_int)
END_FN = ctypes.CFUNCTYPE(c_int, c_void_p, c_int)
LABEL_FN = ctypes.CFUNCTYPE(c_int, c_void_p, c_char_p, c_char_p)


class SinkCallbacks(Structure):
    _fields_ = [("begin", BEGIN_FN), ("row", ROW_FN), ("end", END_FN), ("label", LABEL_FN)]


class Override(Structure):
    _fields_ = [("name", c_char_p), ("value", c_char_p)]


P = c_void_p
PP = POINTER(c_void_p)
E = POINTER(ErrorBuf)
S = c_int  # ss_status

_PROTOS = {
    "ss_error_format": (None, [E, ctypes.c_char_p, c_size_t]),
    "ss_status_name": (c_char_p, [c_int]),
    "ss_version": (c_char_p, []),
    "ss_circuit_parse_file": (S, [c_char_p, POINTER(Override), c_int, PP, E]),
    "ss_circuit_parse_text": (S, [c_char_p, c_size_t, c_char_p, POINTER(Override), c_int, PP,
                                  E]),
    "ss_circuit_destroy": (None, [PP]),
    "ss_circuit_get_value": (S, [P, c_char_p, POINTER(c_double), E]),
    "ss_circuit_temp_c": (c_double, [P]),
    "ss_solver_create": (S, [P, PP, E]),
    "ss_solver_destroy": (None, [PP]),
    "ss_solver_set_value": (S, [P, c_char_p, c_double, E]),
    "ss_solver_get_value": (S, [P, c_char_p, POINTER(c_double), E]),
    "ss_solver_reset_values": (None, [P]),
    "ss_solver_set_temp": (S, [P, c_double, E]),
    "ss_solver_temp_c": (c_double, [P]),
    "ss_solver_warning": (c_char_p, [P, c_int]),
    "ss_solver_select_nodes": (S, [P, POINTER(c_char_p), c_int, E]),
    "ss_solver_set_stage": (S, [P, c_char_p, c_char_p, E]),
    "ss_solver_set_load": (S, [P, c_double, E]),
    "ss_solver_set_noise": (S, [P, c_char_p, c_char_p, c_char_p, E]),
    "ss_table_rows": (c_int, [P]),
    "ss_table_cols": (c_int, [P]),
    "ss_table_col_name": (c_char_p, [P, c_int]),
    "ss_table_row_label": (c_char_p, [P, c_int]),
    "ss_table_get": (c_double, [P, c_int, c_int]),
    "ss_table_values": (ctypes.c_long, [P, ctypes.POINTER(c_double), ctypes.c_long]),
    "ss_table_destroy": (None, [PP]),
    "ss_sink_create": (S, [POINTER(SinkCallbacks), c_void_p, PP, E]),
    "ss_sink_destroy": (None, [PP]),
    "ss_op_solve": (S, [P, PP, c_void_p, E]),
    "ss_op_emit": (S, [P, P, c_void_p, E]),
    "ss_dc_sweep_emit": (S, [P, P, E]),
    "ss_ac_sweep_emit": (S, [P, P, E]),
    "ss_tran_emit": (S, [P, P, E]),
    "ss_stage_emit": (S, [P, P, PP, E]),
    "ss_noise_emit": (S, [P, P, PP, PP, E]),
    "ss_limits_create": (S, [PP, E]),
    "ss_limits_add_file": (S, [P, c_char_p, E]),
    "ss_limits_add_text": (S, [P, c_char_p, c_char_p, E]),
    "ss_limits_add_circuit": (S, [P, P, E]),
    "ss_limits_count": (c_int, [P]),
    "ss_limits_destroy": (None, [PP]),
    "ss_limits_check_names": (S, [P, P, E]),
    "ss_figures_compute": (S, [P, P, PP, E]),
    "ss_check_evaluate": (S, [P, P, PP, POINTER(c_int), E]),
    "ss_study_create": (S, [c_char_p, POINTER(Override), c_int, PP, E]),
    "ss_study_set_stage": (S, [P, c_char_p, c_char_p, E]),
    "ss_study_add_vary": (S, [P, c_char_p, E]),
    "ss_study_add_tolerance": (S, [P, c_char_p, E]),
    "ss_study_add_match": (S, [P, c_char_p, E]),
    "ss_study_set_trials": (S, [P, c_long, c_ulonglong, E]),
    "ss_study_set_threads": (S, [P, c_int, E]),
    "ss_study_points": (c_long, [P]),
    "ss_study_run": (S, [P, PP, E]),
    "ss_study_destroy": (None, [PP]),
}

for _name, (_res, _args) in _PROTOS.items():
    _fn = getattr(lib, _name)
    _fn.restype = _res
    _fn.argtypes = _args


def _text(b):
    return b.decode("utf-8", "replace")


def raise_error(err):
    """Raises Error from a filled ErrorBuf."""
    buf = ctypes.create_string_buffer(1100)
    lib.ss_error_format(ctypes.byref(err), buf, len(buf))
    status = lib.ss_status_name(err.code)
    raise Error(err.code, _text(status) if status else str(err.code), _text(err.file),
                err.line, _text(err.message), _text(buf.value))


def call(fn, *args):
    """fn(*args, &err); raises Error unless it returns SS_OK."""
    err = ErrorBuf()
    if fn(*args, ctypes.byref(err)) != 0:
        raise_error(err)


def overrides(sets):
    """A {name: value} mapping as an ss_override array (and its length)."""
    if not sets:
        return None, 0
    arr = (Override * len(sets))()
    for i, (name, value) in enumerate(sets.items()):
        text = value if isinstance(value, str) else repr(float(value))
        arr[i].name = str(name).encode()
        arr[i].value = text.encode()
    return arr, len(sets)


class Owned:
    """An owner of one C handle (self._h, a c_void_p) freed by its destroy call
    (self._destroy, kept on the object: module globals may be gone at exit): close() frees it
    now, a `with` block at its end, garbage collection at the latest."""

    def close(self):
        if getattr(self, "_h", None) and self._h.value:
            self._destroy(ctypes.byref(self._h))

    def __del__(self):
        self.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
