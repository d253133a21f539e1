"""Text of dilute-solution results (edge): statements, tables and the command's report.

The core (:mod:`viscometry.polymer`) works in SI; here [η] is shown in the inverse of the
series' concentration unit (mL/g for g/mL, dL/g for g/dL), molar masses in g/mol. Numbers are
rounded for reports by :func:`viscometry.gum.rounding.round_result` (U to two significant
digits, GUM 7.2.6) and plain numbers by :mod:`viscometry.text`.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

from viscometry import units as _units
from viscometry.gum.rounding import round_result
from viscometry.text import format_dof, format_percent, format_significant, format_unit, one_line

if TYPE_CHECKING:
    from viscometry.polymer.series import Estimate, Extrapolation, MonteCarloCheck

__all__ = [
    "CAUTION",
    "concentration_scale",
    "estimate_statement",
    "intrinsic_unit",
    "series_text",
]

#: The safety note every polymer report, example and workbook carries.
CAUTION = (
    "Safety: solvents for polymers (hot phenol mixtures, formic and sulfuric acid, chlorinated "
    "solvents) are toxic or corrosive; work in a fume cupboard with the protective equipment "
    "of the lab's procedures, and follow local codes and the safety data sheets."
)
#: Names of the single-point forms in reports.
FORM_NAMES = {
    "solomon_ciuta": "Solomon–Ciută",
    "billmeyer": "Billmeyer",
    "deb_chatterjee": "Deb–Chatterjee",
}


def concentration_scale(concentration_unit: str) -> float:
    """SI value of one ``concentration_unit`` [kg/m³ per unit]; [η] in the inverse unit is
    [η]_SI times this number.

    Examples
    --------
    >>> concentration_scale("g/dL"), concentration_scale("g/mL")
    (10.0, 1000.0)
    """
    scale, _ = _units.si_conversion(concentration_unit, "concentration_unit")
    return float(f"{scale:.15g}")


def intrinsic_unit(concentration_unit: str) -> str:
    """The unit of [η] for a concentration unit: its inverse, written for display.

    Examples
    --------
    >>> intrinsic_unit("g/dL"), intrinsic_unit("g/mL"), intrinsic_unit("kg/m^3")
    ('dL/g', 'mL/g', 'm³/kg')
    """
    text = concentration_unit.replace(" ", "")
    if text.count("/") == 1 and text.replace("/", "").isalpha():
        top, bottom = text.split("/")
        return f"{bottom}/{top}"
    return format_unit(f"1/({text})")


def _u2(x: float) -> str:
    """An uncertainty to two significant digits, trailing zeros kept (0.0020, not 0.002)."""
    return format_significant(float(x), 2)


def _plain_unit(unit: str) -> str:
    """A simple unit as typed (``g/dL`` keeps its capital L), others formatted."""
    text = unit.replace(" ", "")
    return text if text.replace("/", "").isalpha() else format_unit(text)


def estimate_statement(name: str, est: Estimate, scale: float = 1.0, unit: str = "") -> str:
    """``name = y ± U unit (k = …, p = … %, ν_eff = …)`` with U to two significant digits.

    Examples
    --------
    >>> import math
    >>> from viscometry.polymer.series import Estimate
    >>> estimate_statement("[η]", Estimate(0.065123, 0.0002, math.inf, 2.0, 0.0004, 0.9545), 10, "dL/g")
    '[η] = 0.6512 ± 0.0040 dL/g (k = 2.00, p = 95.45 %, ν_eff = ∞)'
    """
    if not est.expanded_uncertainty > 0:
        return f"{name} = {est.value * scale:.6g}{' ' + unit if unit else ''} (no uncertainty)"
    r = round_result(est.value * scale, est.expanded_uncertainty * scale)
    suffix = f" {unit}" if unit else ""
    return (
        f"{name} = {r.value} ± {r.uncertainty}{suffix} (k = {est.coverage_factor:.2f}, "
        f"p = {format_percent(est.coverage_probability)} %, ν_eff = {format_dof(est.effective_dof)})"
    )


def _table(rows: Sequence[Sequence[str]]) -> list[str]:
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    return [
        "  ".join(
            c.rjust(w) if i else c.ljust(w) for i, (c, w) in enumerate(zip(r, widths, strict=True))
        )
        for r in rows
    ]


def points_lines(ext: Extrapolation, c_unit: str) -> list[str]:
    """The table of the solutions: c, η_rel, η_sp/c and ln(η_rel)/c with uncertainties."""
    cs = concentration_scale(c_unit)
    e_unit = intrinsic_unit(c_unit)
    rows = [["solution", f"c/({_plain_unit(c_unit)})", "u(c)", "η_rel", "u(η_rel)",
             f"η_sp/c/({e_unit})", f"ln(η_rel)/c/({e_unit})"]]  # fmt: skip
    h, k = ext.huggins, ext.kraemer
    for i, label in enumerate(ext.series.labels()):
        rows.append([
            one_line(label, 40), f"{ext.concentrations[i] / cs:.5f}",
            _u2(ext.concentration_uncertainties[i] / cs), f"{ext.relative_viscosities[i]:.5f}",
            _u2(ext.relative_uncertainties[i]), f"{h.ordinates[i] * cs:.5f}",
            f"{k.ordinates[i] * cs:.5f}",
        ])  # fmt: skip
    return _table(rows)


def fit_lines(ext: Extrapolation, c_unit: str) -> list[str]:
    """[η] of each line, its constant, lack of fit, dominant input and the consistency verdict."""
    cs = concentration_scale(c_unit)
    e_unit = intrinsic_unit(c_unit)
    out = []
    for fit, kname in ((ext.huggins, "k_H"), (ext.kraemer, "k_K")):
        out.append(
            f"{fit.form.capitalize()}: " + estimate_statement("[η]", fit.intrinsic, cs, e_unit)
        )
        out.append(
            f"  {kname} = {fit.constant.value:.4f}, u({kname}) = {_u2(fit.constant.standard_uncertainty)}; "
            f"χ² = {fit.chi_squared:.3g} (ν = {fit.dof}, p = {fit.p_value:.2g}); "
            f"largest contribution: {fit.intrinsic.dominant()}"
        )
    d = ext.difference
    verdict = "consistent" if ext.consistent else "NOT consistent"
    out.append(
        f"Huggins − Kraemer: {d.value * cs:.3g} {e_unit}, U = {_u2(d.expanded_uncertainty * cs)} "
        f"{e_unit}: {verdict} (|difference| {'≤' if ext.consistent else '>'} U)"
    )
    out.append(
        f"k_H + k_K = {ext.huggins.constant.value + ext.kraemer.constant.value:.4f} (near 0.5 where both lines hold)"
    )
    return out


def single_point_lines(ext: Extrapolation, c_unit: str) -> list[str]:
    """Each single-point estimate with its bias against the Huggins [η]."""
    cs = concentration_scale(c_unit)
    e_unit = intrinsic_unit(c_unit)
    rows = [["form", "solution", f"[η]/({e_unit})", "u", "bias", "u(bias)", "bias/[η]"]]
    for sp in ext.single_points:
        rows.append([
            FORM_NAMES.get(sp.form, sp.form), one_line(sp.label, 40),
            f"{sp.estimate.value * cs:.5f}", _u2(sp.estimate.standard_uncertainty * cs),
            f"{sp.bias.value * cs:+.5f}", _u2(sp.bias.standard_uncertainty * cs),
            f"{100 * sp.relative_bias:+.2f} %",
        ])  # fmt: skip
    return _table(rows)


def monte_carlo_lines(mc: MonteCarloCheck, ext: Extrapolation, c_unit: str) -> list[str]:
    """Monte Carlo mean, u and interval of [η] beside the propagated values."""
    cs = concentration_scale(c_unit)
    e_unit = intrinsic_unit(c_unit)
    out = [
        f"Monte Carlo, {mc.trials} trials, seed {mc.seed} (p = {format_percent(mc.coverage_probability)} %):"
    ]
    for name, stats, fit in (
        ("Huggins", mc.huggins, ext.huggins),
        ("Kraemer", mc.kraemer, ext.kraemer),
    ):
        mean, u, low, high = (x * cs for x in stats)
        out.append(
            f"  {name}: mean {mean:.5f}, u {_u2(u)} (propagated {_u2(fit.intrinsic.standard_uncertainty * cs)}), "
            f"interval [{low:.5f}, {high:.5f}] {e_unit}"
        )
    out.append(
        "  (Type A inputs are drawn from scaled t distributions with their degrees of freedom, "
        "JCGM 101:2008, 6.4.9: with few readings u exceeds the propagated u; compare the "
        "interval with U)"
    )
    return out


def series_text(
    ext: Extrapolation,
    *,
    concentration_unit: str = "g/mL",
    title: str = "",
    monte_carlo: MonteCarloCheck | None = None,
    molar_mass: Estimate | None = None,
) -> str:
    """The whole report of an extrapolation, as the command prints it."""
    lines = [one_line(title or ext.series.title or "Dilute-solution viscometry"), ""]
    lines += points_lines(ext, concentration_unit) + [""]
    lines += fit_lines(ext, concentration_unit) + [""]
    lines += ["Single-point estimates against the Huggins [η]:"]
    lines += single_point_lines(ext, concentration_unit)
    if monte_carlo is not None:
        lines += [""] + monte_carlo_lines(monte_carlo, ext, concentration_unit)
    if molar_mass is not None:
        lines += [
            "",
            "Mark–Houwink from the Huggins [η]: "
            + estimate_statement("M_v", molar_mass, 1.0, "g/mol"),
        ]
    if ext.warnings:
        lines += [""] + [f"warning: {one_line(w)}" for w in ext.warnings]
    lines += ["", CAUTION]
    return "\n".join(lines)
