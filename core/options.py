"""Typed solver options: each solver declares a frozen pydantic model, and every option is checked.

A solver spec declares ``options=`` as a subclass of :class:`SolverOptions` (fields with
defaults and a one-line ``description`` each).  A third party may pass a plain
``{name: default}`` mapping instead; it becomes a model with untyped fields.  An unknown
option is an :class:`~spinward.core.errors.InputError` that lists the solver's options and
suggests a close match; a wrong type or an out-of-range value names the option.
"""

from __future__ import annotations

import difflib
from collections.abc import Mapping
from typing import Any

import numpy as np
from pydantic import BaseModel, ConfigDict, Field, ValidationError, create_model

from .errors import InputError


class SolverOptions(BaseModel):
    """Base of every solver's options: immutable, no unknown names, strict types (2.7 is no int, '5' no number)."""

    model_config = ConfigDict(frozen=True, extra="forbid", strict=True, allow_inf_nan=False)


class AnyOptions(BaseModel):
    """Options of a caller-supplied callable: anything goes, passed through unchecked."""

    model_config = ConfigDict(frozen=True, extra="allow")


def model_from_mapping(name: str, defaults: Mapping[str, Any]) -> type[BaseModel]:
    """A model for a plain ``{option: default}`` mapping ("*" accepts any option)."""
    if "*" in defaults:
        return AnyOptions
    fields: dict[str, Any] = {key: (Any, Field(default=value)) for key, value in defaults.items()}
    return create_model(f"{name.title().replace('-', '')}Options", __base__=SolverOptions, **fields)


def plain(value: Any) -> Any:
    """JSON- and numpy-shaped values into what a strict model expects: lists → tuples, numpy scalars → Python."""
    if isinstance(value, list):
        return tuple(plain(v) for v in value)
    if isinstance(value, np.generic):
        return value.item()
    return value


def read_options(owner: str, model: type[BaseModel], given: Mapping[str, Any]) -> dict[str, Any]:
    """``given`` checked against ``model`` and completed with its defaults; InputError naming the defect."""
    names = list(model.model_fields)
    unknown = [key for key in given if key not in names]
    if unknown and model is not AnyOptions:
        raise InputError(unknown_message(owner, unknown[0], names))
    try:
        # dict(model), not model_dump(): values stay as given (a Result passed as a start is not turned into a dict)
        checked = model(**{k: plain(v) for k, v in given.items()})
        return {**dict(checked), **(checked.model_extra or {})}
    except ValidationError as exc:
        first = exc.errors()[0]
        option = ".".join(str(x) for x in first["loc"]) or "options"
        raise InputError(f"{owner}: option {option!r} = {given.get(str(first['loc'][0]), None)!r} is invalid: "
                         f"{first['msg'].lower()}; see 'spinward solvers --options {owner}'") from None


def unknown_message(owner: str, name: str, names: list[str]) -> str:
    close = difflib.get_close_matches(name, names, n=1)
    hint = f" Did you mean {close[0]!r}?" if close else ""
    listed = ", ".join(names) if names else "none"
    return f"{owner}: unknown option {name!r}.{hint} Its options: {listed}"


def describe(model: type[BaseModel]) -> list[tuple[str, Any, str]]:
    """(name, default, one line of meaning) for each option, in declaration order."""
    return [(name, field.default, field.description or "") for name, field in model.model_fields.items()]
