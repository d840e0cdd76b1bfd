"""The SDP relaxation (Burer–Monteiro, mixing method), GW rounding and certified bounds.

Canonical sense: maximise ½σᵀKσ + bᵀσ + k₀ over σ ∈ {±1}ⁿ; fields enter via a
ghost spin.  Registers the solvers "sdp" (hyperplane rounding of the factor)
and "spectral" (:mod:`spinward.plugins.spectral`), and the bound providers
"spectral" (runs first, cheaper) and "sdp-dual".  Heavy modules load lazily.
"""

from __future__ import annotations

from typing import Any, Literal

import numpy as np
from pydantic import Field

from spinward.core.options import SolverOptions
from spinward.core.resources import memory_limit
from spinward.core import (Bound, BoundSpec, Capabilities, CanonicalProblem, Solution, SolveContext, SolverSpec,
                           hookimpl)

from .. import spectral

class SdpOptions(SolverOptions):
    """Options of the SDP relaxation with hyperplane rounding."""

    rank: int | None = Field(None, ge=1, le=10_000, description="columns of the Burer–Monteiro factor (default ⌈√(2n)⌉ + 1)")
    tol: float = Field(3e-7, ge=0.0, description="relative change per sweep at which the mixing method stops")
    max_sweeps: int = Field(2000, ge=1, le=10**7, description="most sweeps of the mixing method")
    hyperplanes: int = Field(128, ge=1, le=10**6, description="random hyperplanes tried for rounding")
    polish: int = Field(16, ge=0, le=10**6, description="best rounded states climbed to a 1-flip local optimum")
    precision: Literal["auto", "float32", "float64"] = Field("auto", description="working copy of the couplings")


OPTIONS: dict[str, Any] = {name: field.default for name, field in SdpOptions.model_fields.items()}
SDP_SHARE = 0.7  # of a time limit, for the relaxation; the rest is left for rounding and polishing


def run(problem: CanonicalProblem, ctx: SolveContext) -> Solution:
    """Solve the SDP by the mixing method, round with many hyperplanes, polish the best."""
    from .mixing import remember_factor, solve_sdp
    from .rounding import hyperplane_round

    opt = {name: ctx.option(name, default) for name, default in OPTIONS.items()}
    limit = ctx.time_limit

    def sdp_stop() -> bool:
        return ctx.should_stop() or (limit is not None and ctx.elapsed() > SDP_SHARE * limit)

    factor = solve_sdp(problem, rng=ctx.rng, rank=opt["rank"], tol=float(opt["tol"]), precision=str(opt["precision"]),
                       max_sweeps=int(opt["max_sweeps"]), should_stop=sdp_stop)
    remember_factor(problem, factor)
    r = hyperplane_round(problem, factor, rng=ctx.rng, count=int(opt["hyperplanes"]), polish=int(opt["polish"]),
                         should_stop=ctx.should_stop, offer=ctx.offer)
    info: dict[str, Any] = {"sdp_value": float(factor.value), "sweeps": factor.sweeps,
                            "converged": factor.converged, "rank": int(factor.V.shape[1]),
                            "sdp_seconds": factor.seconds,
                            "mean_rounding": float(r.raw_values.mean()), "best_raw_rounding": float(r.raw_values.max()),
                            "hyperplanes": int(r.raw_values.size), "polished": r.polished}
    return Solution(sigma=r.sigma, info=info)


def fit(problem: Any) -> float:
    """A solid mid-size baseline; the O(n²√n) sweeps make it a poor default for huge inputs."""
    n = getattr(problem, "n", 0)
    return 1.5 if n <= 3000 else 0.5


def cost(problem: CanonicalProblem) -> float:
    """Predicted seconds without a time limit: a few hundred mixing sweeps, then the rounding."""
    from .certificates import _sweep_cost
    from .mixing import lift

    return 300 * _sweep_cost(lift(problem))

def first_seconds(problem: CanonicalProblem, read_seconds: float) -> float:
    """Before a first state: a few mixing sweeps (a read of K and 2·entries·rank multiply-adds
    each), then the rounding and its climb (a few reads)."""
    from .certificates import SWEEP_FLOPS
    from .mixing import default_rank, lift

    lifted = lift(problem)
    entries = lifted.K.nnz if lifted.kind == "sparse" else lifted.n ** 2
    rate = DENSE_SWEEP_FLOPS if lifted.kind == "dense" else SWEEP_FLOPS
    rank = default_rank(lifted.n)
    sweep = read_seconds + 2.0 * entries * rank / rate
    return FIRST_SWEEPS * sweep + 3 * read_seconds + FACTOR_SECONDS * lifted.n * rank


FIRST_SWEEPS = 5
# multiply-adds per second of a dense mixing sweep (BLAS): measured 1.2e11 at n = 8000 on 2 cores
# (161 sweeps of rank 127 in 21 s); a quarter of it, for a loaded machine
DENSE_SWEEP_FLOPS = 3e10
# seconds per entry of the N×rank factor for its set-up, the values and the rounding's products:
# measured 1.2e-8 at N = 2·10⁵, rank 128; four times that, for a loaded machine
FACTOR_SECONDS = 5e-8

SPEC = SolverSpec(
    name="sdp",
    run=run,
    capabilities=Capabilities(fields=True, operator=False),
    summary="SDP relaxation by Burer–Monteiro (mixing method), Goemans–Williamson rounding + single flips",
    options=SdpOptions,
    check=lambda problem: _float64_fits(problem),
    fit=fit,
    cost=cost,
    first_seconds=first_seconds,
)


def _spectral_cost(problem: CanonicalProblem) -> float:
    from .certificates import spectral_cost

    return spectral_cost(problem)


def _dual_cost(problem: CanonicalProblem) -> float:
    from .certificates import dual_cost

    return dual_cost(problem)


def _spectral(problem: CanonicalProblem, ctx: SolveContext) -> Bound | None:
    from .certificates import spectral_bound

    return None if problem.kind == "operator" else spectral_bound(problem, ctx)


def _dual(problem: CanonicalProblem, ctx: SolveContext) -> Bound | None:
    from .certificates import sdp_dual_bound

    return None if problem.kind == "operator" else sdp_dual_bound(problem, ctx)


def _explicit(problem: CanonicalProblem) -> bool | str:
    return True if problem.kind != "operator" else "it needs explicit couplings, not a LinearOperator"


def _float64_fits(problem: CanonicalProblem) -> bool | str:
    """The SDP keeps K in float64 (and float32 from 1500 spins): refuse a dense K whose copies would not fit."""
    verdict = _explicit(problem)
    if verdict is not True or problem.kind != "dense":
        return verdict
    K = problem.K
    need = (0 if isinstance(K, np.ndarray) and K.dtype == np.float64 and not isinstance(K, np.memmap)
            else 8 * problem.n ** 2) + 4 * problem.n ** 2
    limit = memory_limit()
    if need > limit:
        return (f"the SDP needs float64 and float32 copies of the dense K ({need / 2**30:.1f} GiB), more than the "
                f"{limit / 2**30:.1f} GiB available")
    return True


BOUNDS = [
    BoundSpec("spectral", _spectral, summary="largest eigenvalue of the ghost-spin lift, Delorme–Poljak shifted",
              check=_explicit, priority=20, cost=_spectral_cost),
    BoundSpec("sdp-dual", _dual, summary="SDP dual bound from the Burer–Monteiro factor, Cholesky-verified",
              check=_float64_fits, priority=10, cost=_dual_cost),
]


@hookimpl
def spinward_solvers() -> list[SolverSpec]:
    return [SPEC, spectral.SPEC]


@hookimpl
def spinward_bounds() -> list[BoundSpec]:
    return BOUNDS


def bound_report(problem: CanonicalProblem, **kw: Any) -> list[dict[str, Any]]:
    """Both bounds with their times; see :func:`.certificates.bound_report`."""
    from .certificates import bound_report as report

    return report(problem, **kw)
