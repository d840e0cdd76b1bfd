"""Human-readable explanations of what "auto" sees and would do (``spinward inspect``, ``explain=True``)."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from .core.context import SolveContext
from .core.frontdoor import caller_prediction
from .core.plan import IMPROVER_SHARE, PROFILE_SHARE, Part, reserve_seconds
from .core.profile import Profile, profile_of
from .core.registry import Registry
from .core.run import Runner

CANONICAL_NOTE = {
    "maxcut": "canonical couplings K = −w/2 (maximise ½σᵀKσ + bᵀσ + k₀)",
    "qubo": "canonical couplings K = −(Q + Qᵀ)/4 off the diagonal (maximise ½σᵀKσ + bᵀσ + k₀)",
    "ising": "canonical couplings K = J (pair coefficients), fields b = h",
}


def inspect_form(form: Any, registry: Registry, time_limit: float | None = None) -> tuple[Profile, list[Part]]:
    """The profile and the planned parts "auto" would run, without running them."""
    problem = form.canonical()
    profile = profile_of(problem, budget=None if time_limit is None else PROFILE_SHARE * time_limit)
    if problem.n == 0:
        return profile, []
    ctx = SolveContext(rng=np.random.default_rng(0), time_limit=time_limit)
    runner = Runner(problem, registry, ctx, bound=True, bound_share=0.1, reserve=reserve_seconds(problem))
    return profile, runner.parts(None, profile, None)


def format_inspection(form: Any, profile: Profile, parts: list[Part], registry: Registry,
                      time_limit: float | None = None) -> str:
    lines = _profile_lines(form, profile)
    if not parts:
        return "\n".join(lines + ["plan:        nothing to solve (no variables)"])
    ranking = parts[0].ranking
    if len(parts) == 1 and ranking is not None:
        lines.append("solvers:")
        for name, verdict in ranking.verdicts.items():
            text = f"would run (fit {ranking.scores[name]:.3g})" if verdict is True else f"would not: {verdict}"
            lines.append(f"  {name:12s} {text}")
    lines.append("plan:" + ("" if time_limit is None else f"        (time limit {time_limit:g} s)"))
    for part in parts[:12]:
        lines.append("  " + _part_line(part, len(parts) > 1, time_limit))
    if len(parts) > 12:
        lines.append(f"  ... and {len(parts) - 12} more parts")
    lines.append("  bounds: " + _bound_line(parts, registry, time_limit))
    lines += _advice_lines(form, parts)
    return "\n".join(lines)


def _profile_lines(form: Any, p: Profile) -> list[str]:
    return [f"problem:     {form.form}, n = {p.n}, {p.couplings} couplings (density {100 * p.density:.3g}%), "
            f"{'an uncounted number of' if p.components is None else p.components} component(s), {p.kind} storage",
            f"couplings:   mean {p.mean:.4g}, std {p.std:.4g} over all pairs; non-zero mean {p.nonzero_mean:.4g}, "
            f"excess kurtosis {p.excess_kurtosis:.3g}, max |K| {p.max_abs:.4g}"
            + ("" if p.stats_exact else " (from a sample of rows)")
            + f"  [{CANONICAL_NOTE.get(form.form, 'canonical form')}]",
            f"fields:      {'rms ratio to couplings ' + format(p.field_ratio, '.3g') if p.has_fields else 'none'}",
            f"structure:   ferromagnetic {_yn(p.ferromagnetic)}, frustration-free {_yn(p.frustration_free)}, "
            f"treewidth {'≤ ' + str(p.treewidth) if p.treewidth is not None else 'not estimated'}"
            + (f" (at least {p.degeneracy})" if p.degeneracy is not None else ""),
            "spectrum:    " + (f"top eigenvalue {p.top_eigenvalues[0]:.3f} of the normalised couplings (semicircle "
                               f"edge 2), mean part {p.mean_outlier:.3g}" if p.top_eigenvalues else "not inspected"),
            f"profiled in {p.seconds:.3f} s"]


def _part_line(part: Part, several: bool, time_limit: float | None) -> str:
    head = f"part {part.index} ({len(part.idx)} spins): " if several else ""
    names = [s.name for s in part.candidates]
    text = head + f"{names[0]}"
    if len(names) > 1 and part.candidates[0].capabilities.exact:
        text += f" (if it declines: {', '.join(names[1:3])})"
    if part.improver is not None and not part.candidates[0].capabilities.exact:
        share = ("the time the primary leaves" if not IMPROVER_SHARE else f"{100 * IMPROVER_SHARE:.0f}% of the part's "
                 f"time") if time_limit is not None else "its default work"
        text += f", then {part.improver.name} improves the state ({share})"
    return text


def _bound_line(parts: list[Part], registry: Registry, time_limit: float | None) -> str:
    names = []
    for provider in registry.bounds():
        if all(provider.applies(p.problem) is True for p in parts):
            cost = sum(provider.cost(p.problem) for p in parts) if provider.cost is not None else math.nan
            names.append(f"{provider.name} (about {cost:.2g} s)" if math.isfinite(cost) else provider.name)
    share = "10% of the time limit" if time_limit is not None else "up to 15% of the primary's predicted time"
    return (", ".join(names) or "none applies") + f"; they run while they fit {share}"


def _advice_lines(form: Any, parts: list[Part]) -> list[str]:
    lines: list[str] = []
    if len(parts) != 1:
        return lines
    part = parts[0]
    spec = part.candidates[0]
    prof = profile_of(part.problem)
    if spec.predict is not None:
        found = spec.predict(part.problem, prof)
        if found:
            shown = caller_prediction(part.problem, found)
            extra = ", ".join(f"{k.replace('_', ' ')} {v:.6g}" for k, v in shown.items()
                              if k in found.get("canonical", {}) and k != "optimum")
            lines.append(f"prediction:  optimum ≈ {shown['optimum']:.6g}" + (f" ({extra})" if extra else "")
                         + (f"; {found['source']}" if found.get("source") else ""))
    if spec.advise is not None:
        for advice in spec.advise(part.problem, prof):
            lines.append("note:        " + advice.worded(form.phrase(advice.topic, dict(advice.values))
                                                        if advice.topic else None))
    return lines


def _yn(flag: bool | None) -> str:
    return "not checked" if flag is None else ("yes" if flag else "no")
