"""Problem files: Matrix Market, edge lists (whitespace or CSV), GraphML, .npy/.npz and our JSON.

:func:`read_problem` picks the reader from a small table (:data:`FORMATS`) by name or
extension; every reader refuses files above a size limit, never unpickles, and reports
malformed text with its line.  :func:`register_format` adds a reader.
"""

from .dispatch import FORMATS, FORMS, FileFormat, ReadRequest, read_problem, register_format, write_problem

__all__ = ["FORMATS", "FORMS", "FileFormat", "ReadRequest", "read_problem", "register_format", "write_problem"]
