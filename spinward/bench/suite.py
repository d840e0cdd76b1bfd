"""Benchmark suite files (TOML, validated by pydantic) and their expansion into runs.

A suite lists instances (generated from a family or loaded from a folder), the
solvers with their options, the solver seeds, the limits and the number of
repetitions.  Example::

    name = "quick"
    seeds = [0, 1]            # solver seeds
    repetitions = 1
    time_limit = 0.5          # seconds per run; omit (or inf) for none

    [[generate]]
    family = "sk"             # see spinward.adapters.generators.FAMILIES
    sizes = [16, 32]          # the family's size argument (n, or L for "torus")
    seeds = [1, 2]            # instance seeds
    params = { couplings = "gaussian" }

    [[load]]
    folder = "instances"      # relative to the suite file
    pattern = "*.mtx"
    form = "ising"
    best_known = { "g05_60.0.mtx" = -536.0 }   # optional: a reference value per file, caller's units

    [[solvers]]
    name = "local"            # a registered solver, or "auto" (its options: solver_options, candidates)
    options = { restarts = 8 }
    optional = false          # true: skip when the solver is not registered
    # time_limit = inf        # per solver; inf means no limit (e.g. for an exact solver)

    [[solvers]]
    name = "anneal"
    label = "anneal 1000n"    # the name in reports; needed when one solver appears twice
    time_limit = inf          # a work limit instead of a time limit:
    per_spin = { sweeps = 1 } # an option scaled by the instance's n (here: 1·n sweeps)

**Work limits.** A solver entry without a time limit (none in the suite, or ``time_limit =
inf``) does a fixed amount of work that its own options set (anneal ``sweeps`` and
``restarts``, tabu ``moves``, ``restarts`` and ``ball_kicks``, local ``restarts``), and
``per_spin`` scales an option by n.  Such runs are reproducible: the same seed stores the
same state on any machine, under any load and with any number of workers; only their wall
times differ.  Under a time limit, how much work fits depends on the clock.

Every entry's options are checked as ``solve`` checks them (``spinward.check_options``) when
the suite is expanded, so a typo fails before any run.  "auto" takes the options of the
solvers it may pick as ``options = { solver_options = { anneal = { sweeps = 500 } } }``.

Each run is keyed by the instance hash, the solver, its options (the time limit and
``per_spin`` included), the seed and the repetition; see :func:`run_key`.
"""

from __future__ import annotations

import hashlib
import json
import math
import tomllib
from pathlib import Path
from typing import Any

from pydantic import BaseModel, ConfigDict, Field, ValidationError, field_validator

from spinward.core.errors import InputError, SpinwardError

#: bump when a generator's output for the same recipe changes, so old rows stop matching
RECIPE_VERSION = 1


class _Model(BaseModel):
    model_config = ConfigDict(frozen=True, extra="forbid")


class Generated(_Model):
    """Instances drawn from a generator family: one per size and instance seed."""

    family: str
    sizes: list[int] = Field(min_length=1)
    seeds: list[int] = Field(default=[0], min_length=1)
    params: dict[str, Any] = Field(default_factory=dict)

    @field_validator("family")
    @classmethod
    def _known_family(cls, value: str) -> str:
        from spinward.adapters.generators import FAMILIES

        if value not in FAMILIES:
            raise ValueError(f"unknown family {value!r}; choose one of {', '.join(sorted(FAMILIES))}")
        return value


class Loaded(_Model):
    """Instances read from the files of a folder (relative paths are taken from the suite file).

    ``best_known`` maps a file name to a reference value in the caller's units and sense.
    """

    folder: str
    pattern: str = "*"
    form: str | None = None
    family: str | None = None
    best_known: dict[str, float] = Field(default_factory=dict)


class SolverEntry(_Model):
    """One solver with its options; ``time_limit`` overrides the suite's (``inf``: no limit).

    ``per_spin`` gives options as multiples of the instance's n (rounded, at least 1);
    ``label`` names the entry in reports (default: the solver's name).
    """

    name: str
    label: str | None = Field(default=None, min_length=1)
    options: dict[str, Any] = Field(default_factory=dict)
    per_spin: dict[str, float] = Field(default_factory=dict)
    time_limit: float | None = Field(default=None, gt=0)
    optional: bool = False

    @field_validator("per_spin")
    @classmethod
    def _positive_rates(cls, value: dict[str, float]) -> dict[str, float]:
        bad = {k: v for k, v in value.items() if not (v > 0 and math.isfinite(v))}
        if bad:
            raise ValueError(f"per_spin values must be positive numbers (an option per spin), got {bad!r}")
        return value

    @property
    def shown(self) -> str:
        return self.label or self.name


class Suite(_Model):
    """A whole benchmark: instances × solvers × seeds × repetitions."""

    name: str = "suite"
    seeds: list[int] = Field(default=[0], min_length=1)
    repetitions: int = Field(default=1, ge=1)
    time_limit: float | None = Field(default=None, gt=0)
    generate: list[Generated] = Field(default_factory=list)
    load: list[Loaded] = Field(default_factory=list)
    solvers: list[SolverEntry] = Field(min_length=1)
    base: str = "."

    @field_validator("solvers")
    @classmethod
    def _distinct_labels(cls, value: list[SolverEntry]) -> list[SolverEntry]:
        seen = [s.shown for s in value]
        twice = sorted({x for x in seen if seen.count(x) > 1})
        if twice:
            raise ValueError(f"solver entries {twice!r} appear more than once; give each a distinct label = \"...\"")
        return value

    @field_validator("seeds")
    @classmethod
    def _non_negative(cls, value: list[int]) -> list[int]:
        if any(s < 0 for s in value):
            raise ValueError(f"seeds must be non-negative integers, got {value!r}")
        return value


class Instance(_Model):
    """A recipe that rebuilds one instance anywhere: a generator call or a file path.

    ``reference`` is a value the suite gives for it (caller's units), if any.
    """

    family: str
    size: int | None = None
    seed: int | None = None
    params: dict[str, Any] = Field(default_factory=dict)
    path: str | None = None
    form: str | None = None
    digest: str
    reference: float | None = None

    @property
    def name(self) -> str:
        """How reports name it: the file name, or family, size and instance seed ("sk n=24 seed 3")."""
        if self.path is not None:
            return Path(self.path).name
        from spinward.adapters.generators import FAMILIES

        size_name = FAMILIES[self.family][1] if self.family in FAMILIES else "size"
        return f"{self.family} {size_name}={self.size} seed {self.seed}"

    def build(self) -> Any:
        """The problem form (generated, or read from the file)."""
        if self.path is not None:
            from spinward.adapters.files import read_problem

            return read_problem(self.path, form=self.form)
        from spinward.adapters.generators import generate

        return generate(self.family, int(self.size or 0), seed=self.seed, **self.params)

    def known_optimum(self) -> float | None:
        """The suite's reference value, else the family's optimum known by construction, else None."""
        if self.reference is not None or self.path is not None:
            return self.reference
        from spinward.adapters.generators import known_optimum

        return known_optimum(self.family, int(self.size or 0), **self.params)


class RunSpec(_Model):
    """One run of one solver on one instance with one seed and repetition."""

    suite: str
    instance: Instance
    solver: str
    label: str
    options: dict[str, Any]
    per_spin: dict[str, float] = Field(default_factory=dict)
    time_limit: float | None
    seed: int
    repetition: int
    key: str

    def options_for(self, n: int) -> dict[str, Any]:
        """The options with each ``per_spin`` rate times ``n`` (rounded, at least 1)."""
        return {**self.options, **{k: max(1, round(v * n)) for k, v in self.per_spin.items()}}


def _digest(payload: Any) -> str:
    text = json.dumps(payload, sort_keys=True, separators=(",", ":"), default=str)
    return hashlib.sha256(text.encode()).hexdigest()[:24]


def file_digest(path: Path, form: str | None) -> str:
    """Hash of a file's bytes and the form it is read as."""
    h = hashlib.sha256(path.read_bytes())
    h.update(f"|{form}".encode())
    return h.hexdigest()[:24]


def run_key(instance: str, solver: str, options: dict[str, Any], time_limit: float | None, seed: int,
            repetition: int, per_spin: dict[str, float] | None = None) -> str:
    """The stored run's primary key: instance hash + solver + options (with the time limit and any
    per-spin options) + seed + repetition.  The label is not part of it: renaming keeps the runs."""
    work = {**options, "time_limit": time_limit}
    if per_spin:
        work["per_spin"] = per_spin
    return _digest([instance, solver, work, seed, repetition])


def run_seed(seed: int, repetition: int) -> int:
    """The seed a run hands the solver: repetitions of one suite seed are independent streams."""
    import numpy as np

    if repetition == 0:
        return seed
    return int(np.random.SeedSequence([seed, repetition]).generate_state(1, dtype=np.uint32)[0])


def load_suite(path: str | Path) -> Suite:
    """Read and validate a suite file; errors name the file and the bad field."""
    p = Path(path)
    try:
        data = tomllib.loads(p.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(f"suite file {str(p)!r} not found") from None
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{p}: not valid TOML ({exc})") from None
    data.setdefault("base", str(p.resolve().parent))
    try:
        return Suite.model_validate(data)
    except ValidationError as exc:
        problems = "; ".join(f"{'.'.join(map(str, e['loc']))}: {e['msg']}" for e in exc.errors())
        raise InputError(f"{p}: {problems}") from None


def instances(suite: Suite) -> list[Instance]:
    """Every instance recipe of the suite, generated ones first, in file order."""
    out = []
    for g in suite.generate:
        for size in g.sizes:
            for seed in g.seeds:
                recipe = [RECIPE_VERSION, g.family, size, seed, g.params]
                out.append(Instance(family=g.family, size=size, seed=seed, params=g.params, digest=_digest(recipe)))
    for entry in suite.load:
        out += _loaded(suite, entry)
    return out


def _loaded(suite: Suite, entry: Loaded) -> list[Instance]:
    from spinward.adapters.generators import read_folder

    folder = Path(suite.base, entry.folder)
    paths = [path for path, _ in read_folder(folder, pattern=entry.pattern, form=entry.form)]
    unknown = sorted(set(entry.best_known) - {p.name for p in paths})
    if unknown:
        raise InputError(f"suite {suite.name!r}: best_known names {unknown!r}, which are not files matching "
                         f"{entry.pattern!r} in {str(folder)!r}; use the file names")
    return [Instance(family=entry.family or folder.name, path=str(path), form=entry.form,
                     digest=file_digest(path, entry.form), reference=entry.best_known.get(path.name))
            for path in paths]


def expand(suite: Suite, available: list[str]) -> tuple[list[RunSpec], list[str]]:
    """All runs of the suite, and notes about optional solvers skipped because not registered.

    "auto" is always available.  A required solver that is not registered is an error naming it.
    """
    notes, solvers = [], []
    for s in suite.solvers:
        if s.name in available or s.name == "auto":
            solvers.append(s)
        elif s.optional:
            notes.append(f"skipping solver {s.name!r}: not registered (registered: {', '.join(available)})")
        else:
            raise InputError(f"suite {suite.name!r} needs solver {s.name!r}, which is not registered "
                             f"(registered: {', '.join(available)}); install it or mark it optional = true")
    for s in solvers:
        check_entry(suite, s)
    runs = [_spec(suite, inst, s, seed, rep) for inst in instances(suite) for s in solvers
            for seed in suite.seeds for rep in range(suite.repetitions)]
    return runs, notes


def check_entry(suite: Suite, entry: SolverEntry) -> None:
    """Check a solver entry's options (the ``per_spin`` ones as for n = 1) as ``solve`` would, before any run.

    "auto" takes the options of the solvers it may pick through ``solver_options``; ``per_spin``
    scales a named solver's own options only.
    """
    import spinward

    if entry.name == "auto" and entry.per_spin:
        raise InputError(f"suite {suite.name!r}, solver entry {entry.shown!r}: per_spin scales a named solver's "
                         f"options; name the solver, or give 'auto' fixed solver_options")
    options = {**entry.options, **{k: max(1, round(v)) for k, v in entry.per_spin.items()}}
    try:
        spinward.check_options(entry.name, options)
    except SpinwardError as exc:
        raise InputError(f"suite {suite.name!r}, solver entry {entry.shown!r}: {exc}") from None


def _spec(suite: Suite, inst: Instance, s: SolverEntry, seed: int, rep: int) -> RunSpec:
    limit = s.time_limit if s.time_limit is not None else suite.time_limit
    if limit is not None and limit == float("inf"):
        limit = None  # `time_limit = inf` in TOML: no limit for this solver
    return RunSpec(suite=suite.name, instance=inst, solver=s.name, label=s.shown, options=s.options,
                   per_spin=s.per_spin, time_limit=limit, seed=seed, repetition=rep,
                   key=run_key(inst.digest, s.name, s.options, limit, seed, rep, s.per_spin))
