"""A spinward solver plugin: zero-temperature majority-vote dynamics from random starts.

Canonical sense (what every solver sees): maximise C(σ) = ½σᵀKσ + bᵀσ + k₀ over
σ ∈ {±1}ⁿ.  Each round sets every spin to the sign of its local field h = Kσ + b
(all at once), until nothing changes or ``rounds`` pass; the state is offered to
the context after every start, so a time limit or Ctrl-C keeps the best one.
"""

import numpy as np

from spinward import Capabilities, Solution, SolverSpec, hookimpl


def run(problem, ctx):
    starts = ctx.option("starts", 8)
    rounds = ctx.option("rounds", 50)
    for _ in range(starts):
        sigma = ctx.rng.choice(np.array([-1, 1], dtype=np.int8), size=problem.n)
        for _ in range(rounds):
            field = problem.local_fields(sigma)
            new = np.where(field >= 0, 1, -1).astype(np.int8)
            if np.array_equal(new, sigma) or ctx.should_stop():
                break
            sigma = new
        ctx.offer(sigma, problem.value(sigma))
        if ctx.should_stop():
            break
    return Solution(sigma=ctx.best_sigma, info={"starts": starts})


SPEC = SolverSpec(
    name="majority",
    run=run,
    capabilities=Capabilities(exact=False, operator=False),
    summary="majority-vote dynamics from random starts (an example plugin)",
    options={"starts": 8, "rounds": 50},
)


@hookimpl
def spinward_solvers():
    return [SPEC]
