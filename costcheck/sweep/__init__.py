"""Parameter sweeps: run the condition checks over a grid of parameter values, locate
verdict boundaries by bisection, and draw them.

- :mod:`.grid` parses ``--vary NAME=start:stop:count`` / ``NAME=v1,v2,...`` into a plan;
- :mod:`.engine` evaluates points in process, in a local process pool, or on a Dask scheduler;
- :mod:`.boundaries` finds neighbouring verdict changes, bisects them, flags isolated values;
- :mod:`.plots` draws verdict strips, phase maps and margins (matplotlib).
"""

from .engine import SweepResult, run_sweep
from .grid import Axis, SweepSpecError, parse_vary, snap

__all__ = ["Axis", "SweepSpecError", "parse_vary", "snap", "SweepResult", "run_sweep"]
