"""Result tables into numpy: a sink that copies each row the analysis sends straight into a
growing float64 buffer (one memmove per row), and readers of the library's ss_table."""
import ctypes

import numpy as np

from . import _lib
from ._lib import lib


def field_names(names):
    """Column names as numpy field names: as the C table gives them; a repeated name gets
    '#2', '#3' (numpy fields must differ)."""
    seen = {}
    out = []
    for n in names:
        k = seen.get(n, 0) + 1
        seen[n] = k
        out.append(n if k == 1 else f"{n}#{k}")
    return out


def structured(data, names):
    """An (n, cols) float64 array as a structured array with one named f8 field per column
    (a view: no copy)."""
    data = np.ascontiguousarray(data, dtype=np.float64)
    dt = np.dtype({"names": field_names(names), "formats": ["<f8"] * len(names)})
    return data.view(dt).reshape(data.shape[0])


class Collector:
    """An ss_sink of our own that keeps the rows and their labels (labelled tables)."""

    def __init__(self):
        self.names = []
        self.labels = []
        self.n = 0
        self.buf = np.empty((0, 0))
        self.exc = None
        self._cb = _lib.SinkCallbacks(_lib.BEGIN_FN(self._begin), _lib.ROW_FN(self._row),
                                      _lib.END_FN(self._end), _lib.LABEL_FN(self._label))
        self.sink = ctypes.c_void_p()
        _lib.call(lib.ss_sink_create, ctypes.byref(self._cb), None, ctypes.byref(self.sink))

    def close(self):
        lib.ss_sink_destroy(ctypes.byref(self.sink))
        self._cb = None  # the callbacks hold bound methods of self: no cycle left behind

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    def _begin(self, _ctx, n_cols, names, n_rows_hint):
        try:
            self.names = [names[i].decode() for i in range(n_cols)]
            self.buf = np.empty((max(int(n_rows_hint), 16), n_cols))
            self.n = 0
            self.labels = []
            return 0
        except BaseException as e:  # the analysis stops; the exception is raised after it
            self.exc = e
            return 1

    def _row(self, _ctx, values, n_cols):
        try:
            if self.n == self.buf.shape[0]:
                grown = np.empty((2 * self.n, self.buf.shape[1]))
                grown[:self.n] = self.buf
                self.buf = grown
            ctypes.memmove(self.buf.ctypes.data + self.n * n_cols * 8, values, n_cols * 8)
            self.n += 1
            return 0
        except BaseException as e:
            self.exc = e
            return 1

    def _end(self, _ctx, _ok):
        return 0

    def _label(self, _ctx, _col, label):
        try:
            self.labels.append(label.decode())
            return 0
        except BaseException as e:
            self.exc = e
            return 1

    def run(self, fn, *args):
        """fn(*args) with this sink in its place (args holds the string 'SINK' where the sink
        goes); raises what failed."""
        err = _lib.ErrorBuf()
        args = [self.sink if a == "SINK" else a for a in args]
        st = fn(*args, ctypes.byref(err))
        if self.exc is not None:
            raise self.exc
        if st != 0:
            _lib.raise_error(err)

    def array(self):
        return structured(self.buf[:self.n], self.names)

    def mapping(self):
        """A labelled one-column table (quantity,value) as {label: value}."""
        return {lab: float(v) for lab, v in zip(self.labels, self.buf[:self.n, 0])}


def take(ptr):
    """Destroys the ss_table behind the c_void_p ptr (after reading it)."""
    lib.ss_table_destroy(ctypes.byref(ptr))


def table_names(t):
    return [lib.ss_table_col_name(t, c).decode() for c in range(lib.ss_table_cols(t))]


def table_matrix(t):
    """The values of an ss_table as an (rows, cols) float64 array: one copy (ss_table_values)."""
    rows, cols = lib.ss_table_rows(t), lib.ss_table_cols(t)
    flat = np.empty(rows * cols, dtype=np.float64)
    got = lib.ss_table_values(t, flat.ctypes.data_as(ctypes.POINTER(ctypes.c_double)),
                              rows * cols)
    if got != rows * cols:
        raise RuntimeError("ss_table_values copied %d of %d values" % (got, rows * cols))
    return flat.reshape(rows, cols)


def table_labels(t):
    out = []
    for r in range(lib.ss_table_rows(t)):
        lab = lib.ss_table_row_label(t, r)
        out.append(lab.decode() if lab is not None else None)
    return out


def table_array(t):
    return structured(table_matrix(t), table_names(t))


def table_mapping(t):
    """A labelled metric,value table as {label: value} (NaN for an empty cell)."""
    get = lib.ss_table_get
    return {lab: get(t, r, 0) for r, lab in enumerate(table_labels(t))}
