"""stagesim from Python: the C library (libstagesim.so.0) through ctypes, results as numpy
arrays (docs/python.md).

    ckt = stagesim.Circuit.from_file("netlists/vibration_frontend.cir")
    with ckt.solver() as sv:
        sv["R1"] = 47e3
        print(sv.op()["v(c)"])

The library is found from STAGESIM_LIB (a path), else beside an installed prefix
(PREFIX/lib/python3/dist-packages/stagesim -> PREFIX/lib/libstagesim.so.0), else in a build
folder of the source tree, else by the dynamic loader."""
from ._lib import Error, lib_path, lib as _clib
from .circuit import Circuit, Solver, Verdict
from .study import Study

__all__ = ["Circuit", "Solver", "Study", "Verdict", "Error", "lib_path", "version"]


def version():
    """The library's version string."""
    return _clib.ss_version().decode()
