"""Problem files: Matrix Market, weighted edge lists, GraphML, .npy/.npz and our JSON.

:func:`read_problem` picks the reader by extension; every reader refuses files
above a size limit, never unpickles, and reports malformed text with its line.
"""

from .dispatch import FORMS, read_problem, write_problem

__all__ = ["FORMS", "read_problem", "write_problem"]
