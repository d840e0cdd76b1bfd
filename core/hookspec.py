"""The hooks through which every solver and bound provider registers.

Built-in plugins and third-party packages use exactly these hooks.  A third
party exposes a module (or object) with ``@hookimpl`` functions under the
entry-point group ``spinward.solvers``; setting the environment variable
``SPINWARD_NO_PLUGIN_AUTOLOAD=1`` skips entry points (hermetic tests).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import pluggy

if TYPE_CHECKING:
    from .registry import BoundSpec, SolverSpec

PROJECT = "spinward"
ENTRY_POINT_GROUP = "spinward.solvers"
AUTOLOAD_ENV = "SPINWARD_NO_PLUGIN_AUTOLOAD"

hookspec = pluggy.HookspecMarker(PROJECT)
hookimpl = pluggy.HookimplMarker(PROJECT)


class SolverHooks:
    """Hook specifications; each implementation returns a list (possibly empty)."""

    @hookspec
    def spinward_solvers(self) -> "list[SolverSpec]":
        """Return the solver specs this plugin provides.

        Each name must be unique across all plugins; a clash is a PluginError.
        """
        return []

    @hookspec
    def spinward_bounds(self) -> "list[BoundSpec]":
        """Return the bound providers this plugin provides.

        A provider computes an upper bound on the canonical maximum that holds
        for every instance (``certified=True``) or is only an estimate.
        """
        return []
