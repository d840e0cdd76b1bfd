"""The IAMP solver: incremental approximate message passing driven by the zero-temperature Parisi solution (solver "iamp").

Canonical sense: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀.  The couplings are normalised to the
mean-field scale of docs/conventions.md, A = (K − m(11ᵀ − I)) / (s√n), so that on dense
mean-zero i.i.d.-like couplings max ½σᵀAσ ≈ n·P* (P* ≈ 0.7632) and IAMP provably reaches
(1 − ε)·P* (arXiv:1812.10897).  Fields enter through the Parisi formula with their empirical
law, and IAMP runs in two phases, root finding then increments (plugins/iamp/fields.py;
El Alaoui, Montanari & Sellke, arXiv:2001.00904); option ``fields="ghost"`` instead absorbs
them by one extra spin (with a warning: the guarantee no longer applies).

Three stages, each reported on its own in the result's info (``stages``):
1. IAMP: ``solutions`` runs, each rounded by sign (the state the guarantee is about);
2. clean-up: each rounded state climbs to a 1-flip local optimum of the true problem;
3. polish (plugins/iamp/polish.py): rounds of low-temperature re-annealing from the cleaned
   states (``polish_sweeps`` sweeps each, β from ``polish_betas[0]`` to ``[1]`` in units of A);
   the best state is kept, so the polish never loses what the first two stages found.

Result info: the predicted optimum is the result's ``info["prediction"]`` (from ``predict``, in the
caller's units); here fraction_of_prediction
(e/P*, the fluctuation part only, so a large mean part cannot inflate it),
energy_per_spin_rounded / _cleaned / energy_per_spin (final, after the polish), where
e = fluctuation part / (s·n^{3/2}), ``stages`` (seconds and gain of each stage, per spin and
in canonical units), ``guarantee`` (which state the IAMP guarantee covers), and overlaps (solutions > 1).

Precision: by default (``precision="auto"``) the matvecs use a float32 working copy of a dense K
(a memmap, or a K too large for a copy, is streamed block by block) and the polish walks on
an int16 copy (plugins/common/quantised.py) when it is accurate; reported values are always
computed from the caller's K.  ``precision="float64"`` computes in float64 throughout.

Time limits are checked at every IAMP step and every polish chunk; with a limit, polish rounds
go on while another fits.  The first Parisi solve (a few seconds, then cached on disk), the
statistics pass and the Lanczos check run to completion.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import Annotated, Any, Literal

import numpy as np

from pydantic import Field

from spinward.core import CanonicalProblem, Capabilities, InputError, Solution, SolveContext, SolverSpec, hookimpl
from spinward.core.canonical import row_blocks
from spinward.core.options import SolverOptions
from spinward.core.statistics import CouplingStats
from spinward.core.statistics import from_power_sums  # the core's one moment formula
from spinward.core.statistics import coupling_stats as core_coupling_stats

from . import diagnostics as diag
from .fields import ROOT_ITERATIONS, energy_per_spin, field_tables
from .message_passing import Matvec, find_root, iamp, normalised, raw_matvec, with_ghost
from .polish import PolishOutcome, PolishPlan, auto_betas, make_walker, run_polish, scale_of, walker_precision
from .prediction import ASSUMPTION, MIN_PREDICTION_N, advise, fit, fluctuation_e, mean_part, predict, prediction

class IampOptions(SolverOptions):
    """Options of the IAMP solver (see the module docstring)."""

    solutions: Literal["auto"] | Annotated[int, Field(ge=1, le=10_000)] = Field(
        "auto", description="independent IAMP runs sharing one Parisi solution ('auto': (2000/n)², 1 to 4)")
    delta: float = Field(0.005, ge=1e-4, le=0.5, description="variance of each increment (1/δ steps, one product each)")
    parisi_k: int = Field(50, ge=1, le=200, description="levels of the Parisi γ that drives IAMP")
    project: int = Field(2, ge=0, le=16, description="z is made orthogonal to this many latest inputs (0: plain IAMP)")
    spectrum_check: bool = Field(True, description="Lanczos estimate of the extreme eigenvalues of A")
    lanczos_steps: int = Field(16, ge=2, le=500, description="products of the spectrum check")
    coupling_std: float | None = Field(None, gt=0.0, description="the scale s for a LinearOperator (else estimated)")
    probes: int = Field(8, ge=1, le=1000, description="random probes that estimate s for a LinearOperator")
    polish_sweeps: int = Field(6000, ge=0, le=10**7, description="sweeps per polish round after the clean-up (0: none)")
    polish_rounds: Literal["auto"] | Annotated[int, Field(ge=1, le=10**6)] = Field(
        "auto", description="polish rounds ('auto': 1 without a time limit, as many as fit with one)")
    polish_betas: Literal["auto"] | tuple[float, float] = Field(
        "auto", description="first and last β of the polish in units of A ('auto': 1.2 or, from n = 8000, 1.5 to 20)")
    precision: Literal["auto", "float32", "float64"] = Field(
        "auto", description="'auto': float32 products, int16 polish; or float32 / float64 throughout")
    block_visit_sweeps: int = Field(1, ge=1, le=10**6, description="couplings in row blocks on a cluster: polish "
                                                                   "sweeps per visit of a block (1: the in-memory walk)")
    fields: Literal["parisi", "ghost"] = Field("parisi", description="fields through the Parisi formula with their "
                                                                      "law (two-phase IAMP) or by a ghost spin "
                                                                      "(used below 50 spins, or with under 20 s left)")


OPTIONS: dict[str, Any] = {name: field.default for name, field in IampOptions.model_fields.items()}
FIELD_MODES = ("parisi", "ghost")
#: "auto" runs: as many as cost one run at this size (a run costs ∝ n²), at most AUTO_MAX_RUNS
AUTO_REFERENCE_N = 2000
AUTO_MAX_RUNS = 4
#: bytes the polish's integer copy of K may take
INTEGER_COPY_LIMIT = 1 << 30


@dataclass(frozen=True)
class Drive:
    """What drives every IAMP run: the Parisi tables, the start (the root-finding phase with fields), P."""

    tables: Any
    cached: bool
    value: float                 # the Parisi value the tables come from (P_k, or P*(μ) with fields)
    start: tuple[np.ndarray, np.ndarray] | None
    with_fields: bool            # e counts the fields' term (the Parisi field mode)
    info: dict[str, Any]


def _int_option(ctx: SolveContext, name: str, low: int, high: int) -> int:
    value = ctx.option(name, OPTIONS[name])
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or not low <= value <= high:
        raise InputError(f"option {name!r} must be an integer in [{low}, {high}], got {value!r}")
    return int(value)


def _runs_wanted(ctx: SolveContext, n: int) -> int:
    """``solutions``; "auto" gives (2000/n)² runs, at most 4, at least 1.

    Single runs at n ≤ 1000 fail now and then (measured: 1 seed in 5 ended at 0.742; best of
    4 gave min 0.7495, mean 0.7542 over 5 seeds).  Extra runs did not pay at larger n: best of
    two at n = 2000 gave 0.7555 against 0.7553, and at n = 4000 0.7577 against 0.7575 on the
    benchmark's instances, for about 1.7× the time.
    """
    value = ctx.option("solutions", OPTIONS["solutions"])
    if value == "auto":
        return int(min(AUTO_MAX_RUNS, max(1, round((AUTO_REFERENCE_N / max(n, 1)) ** 2))))
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or not 1 <= value <= 10_000:
        raise InputError(f"option 'solutions' must be 'auto' or an integer in [1, 10000], got {value!r}")
    return int(value)


def _delta(ctx: SolveContext) -> float:
    value = ctx.option("delta", OPTIONS["delta"])
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not 1e-4 <= value <= 0.5:
        raise InputError(f"option 'delta' must be a number in [1e-4, 0.5] (e.g. 0.005), got {value!r}")
    return float(value)


def working_precision(problem: CanonicalProblem, ctx: SolveContext) -> tuple[tuple[Any, ...], Any]:
    """(working couplings for the polish, dtype of the IAMP matvecs).

    "auto" computes in float32 (the method is matvec-bound and float32 couplings lose nothing
    measurable); a memmap, or a dense K too large for a float32 copy, is used as given
    (plugins.common.couplings) and streamed, each block cast on the fly.
    """
    from spinward.plugins.common.couplings import check_precision, working_couplings

    precision = check_precision(ctx.option("precision", OPTIONS["precision"]), "iamp")
    dtype = np.float64 if precision == "float64" else np.float32
    if problem.kind == "operator" or isinstance(problem.K, np.memmap):
        return (problem.K,), dtype  # a memmap is streamed in row blocks, never copied
    couplings = working_couplings(problem, precision, "iamp", ctx.remaining())
    if precision == "auto" and couplings[0] is problem.K and problem.K.dtype == np.float64:
        dtype = np.float64  # no float32 copy (a short limit): products in float64 need no cast per block
    return couplings, dtype


SAMPLED_STATS_ENTRIES = 1 << 24  # a dense K with more entries takes sampled moments under a time limit


def coupling_stats(problem: CanonicalProblem, raw: Matvec, ctx: SolveContext,
                   ghost: bool = False) -> tuple[CouplingStats, list[str]]:
    """Moments of K's off-diagonal entries (the core's, exact); with ``ghost``, of the ghost-augmented matrix."""
    notes: list[str] = []
    blocks = row_blocks(problem.K)
    if blocks is not None:  # every entry read where it lives: exact
        stats = from_power_sums(problem.n, blocks.power_sums(), problem.n)
    elif problem.kind == "operator":
        std = ctx.option("coupling_std", None)
        stats, notes = diag.operator_stats(raw, problem.n, ctx.rng, _int_option(ctx, "probes", 1, 1000),
                                           None if std is None else float(std))
    elif ctx.time_limit is not None and problem.kind == "dense" and problem.n ** 2 > SAMPLED_STATS_ENTRIES:
        # under a time limit, a big dense K (a memmap, say) is not read whole for its moments: the
        # core's row sample (the profile's) gives m and s to a few parts in 10⁴
        sampled = core_coupling_stats(problem)
        assert sampled is not None
        stats = sampled
        if not stats.exact:
            notes.append(f"the coupling moments come from a sample of rows (a time limit on a {problem.n}×"
                         f"{problem.n} K)")
    else:
        stats = diag.exact_stats(problem)
    if ghost:
        stats = _with_ghost_stats(stats, problem.b)
    return stats, notes


def _with_ghost_stats(stats: CouplingStats, b: np.ndarray) -> CouplingStats:
    n = stats.n
    pairs, pairs2 = n * (n - 1), (n + 1) * n
    total = stats.mean * pairs + 2 * float(b.sum())
    squares = (stats.std**2 + stats.mean**2) * pairs + 2 * float(b @ b)
    mean = total / pairs2
    std = math.sqrt(max(squares / pairs2 - mean * mean, 0.0))
    return replace(stats, n=n + 1, mean=mean, std=std, couplings=stats.couplings + int(np.count_nonzero(b)))


def _sign(v: np.ndarray) -> np.ndarray:
    return np.where(v >= 0, 1, -1).astype(np.int8)


def _polish_plan(ctx: SolveContext, stats: CouplingStats) -> PolishPlan | None:
    """The polish settings from the options (None when ``polish_sweeps`` is 0)."""
    sweeps = _int_option(ctx, "polish_sweeps", 0, 10**7)
    if sweeps == 0:
        return None
    rounds = ctx.option("polish_rounds", OPTIONS["polish_rounds"])
    if rounds != "auto" and (isinstance(rounds, bool) or not isinstance(rounds, (int, np.integer))
                             or not 1 <= rounds <= 10**6):
        raise InputError(f"option 'polish_rounds' must be 'auto' or an integer in [1, 1000000], got {rounds!r}")
    betas = ctx.option("polish_betas", OPTIONS["polish_betas"])
    if betas == "auto":
        betas = auto_betas(stats.n)
    try:
        lo, hi = (float(v) for v in betas)
    except (TypeError, ValueError):
        lo = hi = math.nan
    if not 0 < lo <= hi < math.inf:
        raise InputError(f"option 'polish_betas' must be 'auto' or two numbers 0 < first <= last (units of A, "
                         f"e.g. (1.2, 20)), got {betas!r}")
    return PolishPlan(sweeps, None if rounds == "auto" else int(rounds), (lo, hi), scale_of(stats.std, stats.n))


def _one_run(problem: CanonicalProblem, A: Matvec, n_eff: int, drive: Drive, ctx: SolveContext,
             project: int) -> dict[str, Any]:
    """One IAMP run, rounded by sign and cleaned by a greedy climb on the true problem."""
    from spinward.plugins.common.flips import local_search

    from .distributed import block_local_search

    start = time.perf_counter()
    res = iamp(A, n_eff, drive.tables, ctx.rng, project=project, should_stop=ctx.should_stop, start=drive.start)
    seconds = time.perf_counter() - start
    rounded = _sign(res.m)
    if n_eff > problem.n:  # ghost spin last: undo the gauge
        rounded = (rounded[:-1] * rounded[-1]).astype(np.int8)
    rounded_value = problem.value(rounded)
    start = time.perf_counter()
    climb = block_local_search if row_blocks(problem.K) is not None else local_search
    sigma, value = climb(problem, rounded)
    ctx.offer(sigma, value)
    return {"sigma": sigma, "value": value, "rounded": rounded, "rounded_value": rounded_value,
            "cleaned": sigma, "cleaned_value": value, "steps": res.steps, "stopped": res.stopped,
            "seconds": seconds, "matvec_seconds": res.matvec_seconds,
            "clean_up_seconds": time.perf_counter() - start}


def _edges(A: Matvec, n_eff: int, ctx: SolveContext) -> tuple[float, float] | None:
    if not ctx.option("spectrum_check", True):
        return None
    return diag.lanczos_extremes(A, n_eff, ctx.rng, _int_option(ctx, "lanczos_steps", 2, 500), ctx.should_stop)


def _polish_runs(problem: CanonicalProblem, runs: list[dict], couplings: tuple[Any, ...], stats: CouplingStats,
                 ctx: SolveContext) -> PolishOutcome | None:
    """Polish rounds from the cleaned IAMP states (None when disabled, stopped, or K is an operator)."""
    plan = _polish_plan(ctx, stats)
    if plan is None or ctx.should_stop() or (problem.kind == "operator" and row_blocks(problem.K) is None):
        return None
    precision = str(ctx.option("precision", OPTIONS["precision"]))
    walker = make_walker(problem, couplings, stats.std, precision, INTEGER_COPY_LIMIT,
                         _int_option(ctx, "block_visit_sweeps", 1, 10**6))
    outcome = run_polish(problem, [(r["cleaned"], r["cleaned_value"]) for r in runs], plan, walker, ctx)
    outcome.precision, outcome.betas = walker_precision(walker), plan.betas
    return outcome


def _field_mode(problem: CanonicalProblem, ctx: SolveContext) -> str:
    """"none" without fields, else the ``fields`` option ("parisi" or "ghost").

    "parisi" falls back to the ghost spin below ``PARISI_FIELDS_MIN_N`` spins (the law of a
    handful of fields says nothing, and each new law costs a Parisi solve of a second or more),
    and under a time limit with less than ``PARISI_FIELDS_MIN_SECONDS`` left (that solve does
    not watch the clock).
    """
    mode = ctx.option("fields", OPTIONS["fields"])
    if mode not in FIELD_MODES:
        raise InputError(f"option 'fields' must be 'parisi' or 'ghost', got {mode!r}")
    if not problem.has_fields:
        return "none"
    if mode == "parisi" and (problem.n < PARISI_FIELDS_MIN_N or ctx.remaining() < PARISI_FIELDS_MIN_SECONDS):
        return "ghost"
    return str(mode)


PARISI_FIELDS_MIN_N = 50
PARISI_FIELDS_MIN_SECONDS = 20.0


def _drive(problem: CanonicalProblem, A: Matvec, stats: CouplingStats, mode: str, steps: int,
           ctx: SolveContext) -> Drive:
    """The tables (and, with fields, the root-finding phase's state) that drive every run."""
    from .parisi import load_tables

    k = _int_option(ctx, "parisi_k", 1, 200)
    if mode != "parisi":
        tables, cached = load_tables(k, steps)
        return Drive(tables, cached, tables.value, None, False, {"mode": mode} if mode != "none" else {})
    h = np.asarray(problem.b, dtype=np.float64) / scale_of(stats.std, stats.n)
    ft = field_tables(h, k, steps)
    x, m, change = find_root(A, h, ft.tables.x, ft.tables.d1[0], ft.tables.d2[0], ROOT_ITERATIONS, ctx.should_stop)
    info = {"mode": "parisi", "parisi_value": ft.value, "q_min": ft.q_min, "root_time": ft.root_time,
            "root_iterations": ROOT_ITERATIONS, "root_last_change": change,
            "normalised_field_mean": float(h.mean()), "normalised_field_rms": float(np.sqrt(np.mean(h * h)))}
    return Drive(ft.tables, ft.cached, ft.value, (x, m), True, info)


def run(problem: CanonicalProblem, ctx: SolveContext) -> Solution:
    """IAMP runs (``solutions`` of them) sharing one Parisi solution, cleaned, then polished; the best is returned."""
    runs_wanted = _runs_wanted(ctx, problem.n)
    steps = int(round(1.0 / _delta(ctx)))
    project = _int_option(ctx, "project", 0, 16)
    mode = _field_mode(problem, ctx)
    _polish_plan(ctx, CouplingStats(1, 0, 0.0, 1.0, 0.0, 1.0, None, 0.0))  # bad options fail before any work
    couplings, dtype = working_precision(problem, ctx)
    raw = raw_matvec(couplings[0] if problem.kind == "dense" else problem.K, problem.kind, dtype)
    if mode == "ghost":
        raw = with_ghost(raw, np.asarray(problem.b, dtype=np.float64))
    stats, stat_notes = coupling_stats(problem, raw, ctx, ghost=mode == "ghost")
    n_eff = stats.n
    if problem.n < 2 or stats.std == 0:
        from spinward.plugins.common.flips import local_search

        sigma, _ = local_search(problem, np.ones(problem.n, dtype=np.int8))
        ctx.warn("the couplings carry no disorder (all equal or n < 2): IAMP does not apply; returned a local optimum")
        return Solution(sigma=sigma, info={"eligible": False})
    A = normalised(raw, stats.mean, stats.std)
    edges = _edges(A, n_eff, ctx)
    if ctx.should_stop():  # Ctrl-C (or the clock) before any state: all spins up, said by the status
        return Solution(sigma=np.ones(problem.n, dtype=np.int8), status="time-limit" if ctx.expired() else None,
                        info={"stopped": "before the first message-passing step"})
    notes, eligible = diag.findings(stats, edges, mode == "ghost", stat_notes)
    for note in notes:
        ctx.warn(note)
    drive = _drive(problem, A, stats, mode, steps, ctx)
    runs = []
    for _ in range(runs_wanted):
        runs.append(_one_run(problem, A, n_eff, drive, ctx, project))
        if ctx.should_stop():
            break
    polished = _polish_runs(problem, runs, couplings, stats, ctx)
    best = dict(max(runs, key=lambda r: r["value"]))
    if polished is not None and polished.value > best["value"]:
        best["sigma"], best["value"] = polished.sigma, polished.value
    info = _info(problem, stats, edges, eligible, drive, runs, best, polished)
    return Solution(sigma=best["sigma"], info=info)


def energy(problem: CanonicalProblem, stats: CouplingStats, drive: Drive, sigma: np.ndarray, value: float) -> float:
    """e of docs/conventions.md: the fluctuation part per s·n^{3/2}; with the Parisi field mode the fields' term too."""
    if drive.with_fields:
        return energy_per_spin(value, problem.k0, mean_part(stats.mean, sigma, problem.n), stats.std, problem.n)
    return fluctuation_e(problem, sigma, value, stats)


def _stages(problem: CanonicalProblem, e: Callable[[np.ndarray, float], float], runs: list[dict], best: dict,
            polished: PolishOutcome | None) -> dict[str, Any]:
    """Seconds and gain of each stage: IAMP (rounded), clean-up (greedy), polish (re-anneal rounds).

    Gains are in canonical units (``gain``) and in e, the energy per spin of docs/conventions.md
    (``gain_per_spin``, differences of e between the stage's end and start states, so the three
    add up to the final e); the clean-up's gain is that of the best cleaned run over its own
    rounded state.
    """
    top = max(runs, key=lambda r: r["cleaned_value"])
    e_rounded, e_cleaned = e(top["rounded"], top["rounded_value"]), e(top["cleaned"], top["cleaned_value"])
    stages: dict[str, Any] = {
        "iamp": {"seconds": sum(r["seconds"] for r in runs), "runs": len(runs), "value": top["rounded_value"],
                 "energy_per_spin": e_rounded},
        "clean_up": {"seconds": sum(r["clean_up_seconds"] for r in runs), "method": "greedy single flips",
                     "gain": top["cleaned_value"] - top["rounded_value"], "gain_per_spin": e_cleaned - e_rounded},
    }
    if polished is not None:
        stages["polish"] = {"seconds": polished.seconds, "rounds": len(polished.round_values),
                            "sweeps": polished.sweeps, "moves": polished.moves, "stopped_early": polished.stopped,
                            "precision": polished.precision, "betas": list(polished.betas),
                            "round_values": polished.round_values, "gain": best["value"] - top["cleaned_value"],
                            "gain_per_spin": e(best["sigma"], best["value"]) - e_cleaned}
    return stages


GUARANTEE_NOTE = ("the IAMP guarantee ((1 − ε)·P* as n → ∞, on mean-field couplings) is about the rounded IAMP "
                  "state; the clean-up and the polish only ever improve on it (the best state is kept), "
                  "without a guarantee of their own")


def _info(problem: CanonicalProblem, stats: CouplingStats, edges: Any, eligible: bool, drive: Drive,
          runs: list[dict], best: dict, polished: PolishOutcome | None) -> dict[str, Any]:
    def e(sigma: np.ndarray, value: float) -> float:
        return energy(problem, stats, drive, sigma, value)

    top = max(runs, key=lambda r: r["cleaned_value"])
    info: dict[str, Any] = {
        "eligible": eligible, "coupling_mean": stats.mean, "coupling_std": stats.std,
        "density": stats.density if stats.exact else None, "excess_kurtosis": stats.excess_kurtosis,
        "scale_exact": stats.exact,
        "spectrum_edges": edges, "parisi_cached": drive.cached, "iterations": top["steps"],
        "iamp_seconds": [r["seconds"] for r in runs], "iamp_matvec_seconds": [r["matvec_seconds"] for r in runs],
        "stopped_early": any(r["stopped"] for r in runs) or bool(polished and polished.stopped),
        "energy_per_spin_rounded": e(top["rounded"], top["rounded_value"]),
        "energy_per_spin_cleaned": e(top["cleaned"], top["cleaned_value"]),
        "energy_per_spin": e(best["sigma"], best["value"]),
        "polish_seconds": polished.seconds if polished is not None else 0.0,
        "energy_per_spin_runs": [e(r["cleaned"], r["cleaned_value"]) for r in runs],
        "stages": _stages(problem, e, runs, best, polished),
        "guarantee": GUARANTEE_NOTE,
    }
    if drive.info:
        info["fields"] = drive.info
    if eligible and problem.n >= MIN_PREDICTION_N:
        if drive.with_fields:
            info.update(field_prediction(problem, stats, drive.value, best, info["energy_per_spin"]))
        else:
            info.update(prediction(problem, stats, drive.value, best))
    if len(runs) > 1:
        S = np.stack([r["cleaned"] for r in runs]).astype(np.float64)
        info["overlaps"] = (S @ S.T / problem.n).round(6).tolist()
    return info


def field_prediction(problem: CanonicalProblem, stats: CouplingStats, pstar: float, best: dict,
                     e_best: float) -> dict[str, Any]:
    """P*(μ) in canonical units: s·n^{3/2}·P*(μ) + k₀ + the mean part of the returned state (it is not predicted)."""
    n = problem.n
    return {"predicted_optimum": stats.std * n**1.5 * pstar + problem.k0 + mean_part(stats.mean, best["sigma"], n),
            "fraction_of_prediction": e_best / pstar, "parisi_value": pstar,
            "prediction_note": "the Parisi formula with the fields' empirical law (fields independent of the "
                               "couplings); the couplings' mean part is that of the returned state"}


SPEC = SolverSpec(
    name="iamp",
    run=run,
    capabilities=Capabilities(fields=True, dense=True, sparse=True, operator=True, stochastic=True,
                              assumptions=(ASSUMPTION,
                                           "fields independent of the couplings (they enter through the Parisi "
                                           "formula with their law)")),
    summary="IAMP driven by the zero-temperature Parisi solution, greedy clean-up, then low-temperature re-annealing",
    options=IampOptions,
    fit=fit,
    advise=advise,
    predict=predict,
    # a float32 copy of K, its exact moments, a few message-passing steps, the rounding and its climb
    first_reads=8.0,
)


@hookimpl
def spinward_solvers() -> list[SolverSpec]:
    return [SPEC]
