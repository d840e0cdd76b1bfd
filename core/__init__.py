"""spinward.core: the canonical form, registry, context, results and the front door.

Core knows no particular solver and no file format; adapters and plugins build on it.
"""

from .canonical import CanonicalProblem, drop_ghost_spin, is_operator, is_sparse
from .context import SolveContext, make_seed
from .errors import (AssumptionWarning, FileFormatError, InputError, InputWarning, InternalError, OptionWarning,
                     PluginError, ResourceError, SolverUnsuitableError, SpinwardError, SpinwardWarning,
                     UnknownMethodError)
from .hookspec import AUTOLOAD_ENV, ENTRY_POINT_GROUP, hookimpl, hookspec
from .model import ProblemForm
from .options import SolverOptions
from .registry import Advice, Bound, BoundSpec, Capabilities, Registry, Solution, SolverSpec
from .result import Result

__all__ = [
    "AUTOLOAD_ENV", "ENTRY_POINT_GROUP", "Advice", "AssumptionWarning", "Bound", "BoundSpec", "CanonicalProblem",
    "Capabilities", "FileFormatError", "InputError", "InputWarning", "InternalError", "OptionWarning", "PluginError",
    "ProblemForm", "Registry", "ResourceError", "Result", "Solution", "SolveContext", "SolverOptions", "SolverSpec",
    "SolverUnsuitableError", "SpinwardError", "SpinwardWarning", "UnknownMethodError", "drop_ghost_spin",
    "hookimpl", "hookspec", "is_operator", "is_sparse", "make_seed",
]
