"""spinward.adapters: the caller's forms (QUBO, Ising, MaxCut), file formats and generators.

Each adapter turns the caller's object into the canonical form and evaluates
the caller's objective directly from the caller's own input.
"""

from .coerce import as_form
from .graph import MaxCut
from .ising import Ising
from .qubo import QUBO

__all__ = ["Ising", "MaxCut", "QUBO", "as_form"]
