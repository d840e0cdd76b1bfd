"""The project's one error hierarchy and its warning classes."""

from __future__ import annotations


class SpinwardError(Exception):
    """Base of every error the project raises on purpose.

    Messages say what was wrong with the input and how to fix it.
    """


class InputError(SpinwardError, ValueError):
    """The caller's problem, file or option is malformed."""


class FileFormatError(InputError):
    """A file could not be read; the message names the file and, for text, the line."""


class UnknownMethodError(SpinwardError, KeyError):
    """No solver is registered under the requested name."""

    def __str__(self) -> str:  # KeyError would quote the whole message
        return str(self.args[0]) if self.args else ""


class SolverUnsuitableError(SpinwardError):
    """The chosen solver cannot run on this problem; the message gives its reason."""


class PluginError(SpinwardError):
    """A plugin registered something malformed (duplicate name, wrong type)."""


class ResourceError(SpinwardError, MemoryError):
    """The problem is too large for the requested path (memory, size limit)."""


class MissingDependencyError(SpinwardError, ImportError):
    """An optional feature needs a package that is not installed; the message names the extra to install."""


class InternalError(SpinwardError):
    """Something went wrong inside spinward or a plugin, not in the caller's input: please report it."""


class SpinwardWarning(UserWarning):
    """Base of the project's warnings."""


class AssumptionWarning(SpinwardWarning):
    """A solver's assumptions (dense, mean-zero couplings, no fields...) do not hold."""


class InputWarning(SpinwardWarning):
    """The input was accepted after a documented repair (self-loops dropped, symmetrised...)."""


class OptionWarning(SpinwardWarning):
    """An option was not recognised by the chosen solver and was ignored."""
