"""The compiled column kernel: layout, processes, right-hand side, Newton stages, TR-BDF2 stepper.

=====================  ======================================================================
module                 job
=====================  ======================================================================
``layout``             state / parameter / forcing indices from name tuples; ``StateView``;
                       integer codes and status messages
``params``             the parameter row of a member from its configuration
``inputs``             forcing interpolation and its defaults
``top``                upper boundary: surface scheme, snow slab, surface melt, snow mass
``snowice``            flooding of the snow base (snow-ice)
``transport``          conduction between layers and the motion of the grid
``gravity_drainage``   brine channels and the return flow
``base``               ice-ocean interface: basal velocity, water crossing the interface
``flushing``           melt water percolating through permeable ice
``mixedlayer``         slab ocean mixed layer under the ice
``openwater``          melt-out, open water, new ice
``tendency``           the right-hand side and Jacobian assembled from the processes
``linalg``             block-tridiagonal solve
``newton``             Newton solve of one implicit stage
``stepper``            TR-BDF2 with per-member step control
``workspace``          scratch arrays in one named tuple
``driver``             ``run_serial``, ``run_parallel`` (a whole period per call), ``record_initial``;
                       ``Records``, ``new_records``, ``record``, ``run`` (Python wrappers)
=====================  ======================================================================
"""
from .._jit import is_ready
from .driver import Records, basal_velocity_at, new_records, record, record_initial, run, run_parallel, run_serial
from .layout import (B, F, FORCING_NAMES, NFORCING, NPAR, NSLOT, P, SLOT_INDEX, SLOTS, STATUS_MESSAGES,
                     SURFACE_CODES, StateView, state_size, view)
from .params import parameter_row

__all__ = ["Records", "basal_velocity_at", "new_records", "record", "record_initial", "run", "run_parallel",
           "run_serial", "B", "F", "P", "FORCING_NAMES", "NFORCING", "NPAR",
           "NSLOT", "SLOTS", "SLOT_INDEX", "STATUS_MESSAGES", "SURFACE_CODES", "StateView", "state_size",
           "view", "parameter_row", "needs_compile"]


def needs_compile(batch: bool = False) -> bool:
    """True if the next run will compile the kernel first (no cached machine code yet): the
    serial kernel for one column, the threaded one for a batch."""
    return not (is_ready(run_parallel if batch else run_serial) and is_ready(record_initial))
