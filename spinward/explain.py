"""Human-readable explanations of what "auto" sees and would do (``spinward inspect``, ``explain=True``)."""

from __future__ import annotations

from typing import Any

from .core.dispatch import Choice, choose
from .core.registry import Registry

CANONICAL_NOTE = {
    "maxcut": "canonical couplings K = −w/2 (maximise ½σᵀKσ + bᵀσ + k₀)",
    "qubo": "canonical couplings K = −(Q + Qᵀ)/4 off the diagonal (maximise ½σᵀKσ + bᵀσ + k₀)",
    "ising": "canonical couplings K = J (pair coefficients), fields b = h",
}


def inspect_form(form: Any, registry: Registry) -> Choice:
    """The dispatcher's choice for a problem form, with its profile and verdicts."""
    return choose(form.canonical(), registry)


def format_choice(form: Any, choice: Choice) -> str:
    p = choice.profile
    lines = [f"problem:     {form.form}, n = {p.n}, {p.couplings} couplings (density {100 * p.density:.3g}%), "
             f"{p.components} component(s), {p.kind} storage",
             f"couplings:   mean {p.mean:.4g}, std {p.std:.4g} over all pairs; non-zero mean {p.nonzero_mean:.4g}, "
             f"excess kurtosis {p.excess_kurtosis:.3g}, max |K| {p.max_abs:.4g}  [{CANONICAL_NOTE.get(form.form, 'canonical form')}]",
             f"fields:      {'rms ratio to couplings ' + format(p.field_ratio, '.3g') if p.has_fields else 'none'}",
             f"structure:   ferromagnetic {_yn(p.ferromagnetic)}, frustration-free {_yn(p.frustration_free)}, "
             f"treewidth {'≤ ' + str(p.treewidth) if p.treewidth is not None else 'not estimated'}"
             + (f" (degeneracy {p.degeneracy})" if p.degeneracy is not None else ""),
             f"mean field:  score {p.mean_field_score:.2f}"
             + (f", top eigenvalue {p.top_eigenvalues[0]:.3f} vs semicircle edge 2" if p.top_eigenvalues else "")]
    lines += [f"             - {r}" for r in p.mean_field_reasons]
    lines.append(f"profiled in {p.seconds:.3f} s")
    lines.append("solvers:")
    for name, verdict in choice.verdicts.items():
        text = f"would run (fit {choice.scores[name]:.3g})" if verdict is True else f"would not: {verdict}"
        lines.append(f"  {name:12s} {text}")
    lines.append(f"choice:      {choice.spec.name}"
                 + (f", then {choice.improver.name} improves its state when a time limit is given"
                    if choice.improver else ""))
    if choice.prediction:
        pr = choice.prediction
        lines.append(f"prediction:  optimum ≈ {pr['optimum']:.6g} (finite-size estimate {pr['finite_size_estimate']:.6g}; "
                     f"{pr['source']})")
    return "\n".join(lines)


def _yn(flag: bool) -> str:
    return "yes" if flag else "no"
