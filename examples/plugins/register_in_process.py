"""Register a solver inside one process with ``spinward.register_solver`` and race it against "local".

Scenario of our own (invented data): six sensors on a ring must be split into two
groups so that neighbours that disagree sit apart; the weights are how strongly
two sensors' readings disagree.  Run: ``python examples/plugins/register_in_process.py``.
"""

import networkx as nx
import numpy as np

import spinward


def best_of_random(problem, ctx):
    """Canonical sense: maximise ½σᵀKσ + bᵀσ + k₀.  The best of ``tries`` uniform random states."""
    tries = ctx.option("tries", 64)
    for _ in range(tries):
        sigma = ctx.rng.choice(np.array([-1, 1], dtype=np.int8), size=problem.n)
        ctx.offer(sigma, problem.value(sigma))
        if ctx.should_stop():
            break
    return spinward.Solution(sigma=ctx.best_sigma, info={"tries": tries})


spinward.register_solver(spinward.SolverSpec(
    name="best-of-random", run=best_of_random, summary="the best of many uniform random states",
    capabilities=spinward.Capabilities(exact=False), options={"tries": 64}))

disagreement = {("s1", "s2"): 3.0, ("s2", "s3"): 1.5, ("s3", "s4"): 2.0, ("s4", "s5"): 2.5,
                ("s5", "s6"): 1.0, ("s6", "s1"): 0.5}
ring = nx.Graph()
ring.add_weighted_edges_from((u, v, w) for (u, v), w in disagreement.items())
cut = spinward.MaxCut(ring)
mine = spinward.solve(cut, method="best-of-random", seed=1, tries=200)
ref = spinward.solve(cut, method="enumerate")
print(f"best-of-random: {mine.objective:g}   enumerate (proved): {ref.objective:g}")
print("groups:", {side: sorted(k for k, v in mine.assignment.items() if v == side) for side in (0, 1)})
