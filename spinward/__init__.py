"""spinward: one front door to solve, certify and benchmark QUBO, Ising and MaxCut problems.

Senses: QUBO minimises xᵀQx + c over x ∈ {0,1}ⁿ; Ising minimises
−Σ_{i<j} J_ij s_i s_j − Σ h_i s_i + c over s ∈ {±1}ⁿ; MaxCut maximises the
weight of cut edges.  Internally every problem is the canonical maximisation
of ½σᵀKσ + bᵀσ + k₀.
"""

from .adapters import Ising, MaxCut, QUBO
from .adapters.files import read_problem, write_problem
from .api import canonical, check_options, default_registry, register, register_bound, register_solver, reset_registry, solve, solvers
from .core import (Advice, AssumptionWarning, Bound, BoundSpec, CanonicalProblem, Capabilities, FileFormatError,
                   InputError, InternalError, InputWarning, OptionWarning, PluginError, ProblemForm, Registry, ResourceError, Result, Solution,
                   SolveContext, SolverOptions, SolverSpec, SolverUnsuitableError, SpinwardError, SpinwardWarning,
                   UnknownMethodError, hookimpl)

__version__ = "0.1.0"

__all__ = [
    "Advice", "AssumptionWarning", "Bound", "BoundSpec", "CanonicalProblem", "Capabilities", "FileFormatError",
    "InputError", "InternalError",
    "InputWarning", "Ising", "MaxCut", "OptionWarning", "PluginError", "ProblemForm", "QUBO", "Registry",
    "ResourceError", "Result", "Solution", "SolveContext", "SolverOptions", "SolverSpec", "SolverUnsuitableError", "SpinwardError",
    "SpinwardWarning", "UnknownMethodError", "__version__", "canonical", "check_options", "default_registry", "hookimpl",
    "read_problem", "register", "register_bound", "register_solver", "reset_registry", "solve", "solvers",
    "write_problem",
]
