"""eddypull physics: the fast multi-loop model, its kernels, materials and the FEM reference.

Pure functions and small dataclasses, SI inside; no printing, no file output, no optimiser.
"""

from models.threads import one_blas_thread

one_blas_thread()  # before numpy is loaded where possible: see models/threads.py

from models.design import Design, design_from_dict, load_design  # noqa: E402
from models.errors import DesignError  # noqa: E402
from models.evaluate import evaluate  # noqa: E402
from models.result import Result  # noqa: E402

__all__ = ["Design", "DesignError", "Result", "design_from_dict", "evaluate", "load_design"]
