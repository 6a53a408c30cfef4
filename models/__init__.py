"""eddypull physics: the fast multi-loop model, its kernels, materials and the FEM reference.

Pure functions and small dataclasses, SI inside; no printing, no file output, no optimiser.
"""

from models.design import Design, design_from_dict, load_design
from models.errors import DesignError
from models.evaluate import evaluate
from models.result import Result

__all__ = ["Design", "DesignError", "Result", "design_from_dict", "evaluate", "load_design"]
