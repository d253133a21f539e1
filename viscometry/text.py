"""The one text layer: numbers, units, degrees of freedom, statements and tables as text.

Results of the engine hold numbers only; everything a person reads is made here, once, and
shared by the command line, reports, widgets and workbooks (edge layer; the engine never
imports this module). Conventions, each in one function:

* numbers — :func:`format_number` (``digits`` significant digits, no trailing noise);
* degrees of freedom — :func:`format_dof`: ``∞`` for infinite ν *and* for ν above
  :data:`DOF_SHOWN_AS_INFINITE` (10⁶), where t_p(ν) equals the normal quantile to the digits
  shown; text that shows such a ``∞`` says so once (:data:`DOF_NOTE`);
* units — :func:`format_unit`, with at most one slash (``mm²/(s·K)``);
* the measurand's symbol — :func:`symbol` writes Greek names as letters (``eta`` → η,
  ``nu_w`` → ν_w);
* the result statement — :func:`statement` (JCGM 100:2008, 7.2.6: U to two significant
  digits and the value to the same decimal, with the budget's rounding rule);
* the budget table — :data:`HEADERS` and :func:`table_rows` for text, HTML, Markdown and LaTeX.
"""

from __future__ import annotations

import html
import math
import re
import unicodedata
from collections.abc import Sequence
from decimal import Decimal
from typing import TYPE_CHECKING

from viscometry import units as _units

if TYPE_CHECKING:  # pragma: no cover
    from viscometry.conformity import ConformityDecision
    from viscometry.gum.budget import BudgetResult
    from viscometry.gum.montecarlo import ValidationResult
    from viscometry.gum.simulation import BudgetSimulation
    from viscometry.planning.target import RequiredUncertainty
    from viscometry.proficiency import Score

__all__ = [
    "ASCII_FALLBACK",
    "MESSAGE_LIMIT",
    "MESSAGE_PIECE",
    "UNSAFE_CATEGORIES",
    "VERDICT_WORDS",
    "ascii_fallback",
    "ascii_spelling",
    "audit_summary",
    "audit_table_html",
    "DOF_NOTE",
    "DOF_SHOWN_AS_INFINITE",
    "HEADERS",
    "budget_html",
    "budget_text",
    "decimals_for",
    "decision_statement",
    "escape_controls",
    "format_cost",
    "format_dof",
    "format_exact_percent",
    "format_like",
    "format_number",
    "format_percent",
    "format_relative",
    "format_significant",
    "format_unit",
    "is_unsafe",
    "message_line",
    "model_line",
    "one_line",
    "per_cost_text",
    "percent_change",
    "required_text",
    "score_statement",
    "simulation_lines",
    "statement",
    "summary_lines",
    "symbol",
    "table_rows",
    "unit_label",
    "unit_suffix",
    "validation_statement",
]

#: Degrees of freedom above this are shown as ∞ (t_p(10⁶) and the normal quantile agree to
#: better than 10⁻⁵ for p ≤ 99 %).
DOF_SHOWN_AS_INFINITE = 1e6
#: The sentence that explains a ∞ shown for a finite ν.
DOF_NOTE = "∞: infinite, or more than 10⁶ degrees of freedom"

_GREEK = {
    "alpha": "α", "beta": "β", "gamma": "γ", "delta": "δ", "epsilon": "ε", "zeta": "ζ",
    "eta": "η", "theta": "θ", "kappa": "κ", "lambda": "λ", "mu": "μ", "nu": "ν", "xi": "ξ",
    "pi": "π", "rho": "ρ", "sigma": "σ", "tau": "τ", "phi": "φ", "chi": "χ", "psi": "ψ",
    "omega": "ω", "Delta": "Δ", "Gamma": "Γ", "Theta": "Θ", "Phi": "Φ", "Omega": "Ω",
}  # fmt: skip


# ----------------------------------------------------------------------------- atoms
def symbol(name: str) -> str:
    """The display symbol of a quantity name: a leading Greek letter name as the letter.

    Examples
    --------
    >>> symbol("eta"), symbol("nu_w"), symbol("C"), symbol("eta2")
    ('η', 'ν_w', 'C', 'eta2')
    """
    head, sep, tail = name.partition("_")
    return _GREEK.get(head, head) + sep + tail


def format_number(x: float | None, digits: int = 4) -> str:
    """``x`` to ``digits`` significant digits (``""`` for None or NaN, ``"0"`` for zero).

    Examples
    --------
    >>> format_number(0.0577350269189626), format_number(12345.678, 3), format_number(0.0)
    ('0.05774', '1.23e+04', '0')
    """
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return ""
    if x == 0:
        return "0"
    return f"{x:.{digits}g}"


def format_significant(x: float, digits: int) -> str:
    """``x`` rounded to ``digits`` significant digits, in fixed notation where sensible.

    Examples
    --------
    >>> format_significant(0.0012345, 2), format_significant(1234.5, 2), format_significant(2e-7, 2)
    ('0.0012', '1200', '2.0e-07')
    """
    if x == 0 or not math.isfinite(x):
        return f"{x:g}"
    exponent = math.floor(math.log10(abs(x)))
    if exponent < -5 or exponent > 9:
        return f"{x:.{digits - 1}e}"
    decimals = digits - 1 - exponent
    if decimals >= 0:
        return f"{x:.{decimals}f}"
    return f"{round(x, decimals):.0f}"


def format_dof(nu: float) -> str:
    """Degrees of freedom: ``'∞'`` for infinite or above 10⁶, else at most one decimal.

    Examples
    --------
    >>> format_dof(float("inf")), format_dof(56652389261459376.0), format_dof(16.74), format_dof(4.0)
    ('∞', '∞', '16.7', '4')
    """
    if math.isinf(nu) or nu > DOF_SHOWN_AS_INFINITE:
        return "∞"
    return f"{nu:.1f}".rstrip("0").rstrip(".")


def format_unit(unit: str) -> str:
    """A unit for display (``'mm²/s'``, ``'mm²/(s·K)'``), ``''`` when dimensionless."""
    return _units.format_unit(unit) if unit else ""


def unit_label(unit: str) -> str:
    """A unit for display if it parses as one, else the text itself (a free label)."""
    from viscometry.errors import InputError, UnitError

    if not isinstance(unit, str):
        raise InputError(f"unit must be a string, got {unit!r}")
    try:
        return format_unit(unit)
    except UnitError:
        return one_line(unit, 40)


def unit_suffix(unit: str) -> str:
    """``' mm²/s'`` — the unit with a leading space — or ``''`` when dimensionless."""
    text = format_unit(unit)
    return f" {text}" if text else ""


def format_percent(p: float) -> str:
    """A probability as percent without trailing zeros: 0.9545 → ``'95.45'``, 0.95 → ``'95'``."""
    return f"{100 * p:.2f}".rstrip("0").rstrip(".")


def format_relative(rel: float) -> str:
    """A relative uncertainty in percent with two significant digits, in fixed notation.

    Examples
    --------
    >>> format_relative(0.0018), format_relative(0.2), format_relative(4.3)
    ('0.18 %', '20 %', '430 %')
    """
    return format_significant(100 * rel, 2) + " %"


def format_exact_percent(fraction: float) -> str:
    """A fraction in percent from its shortest decimal, without float noise: 0.0064 → ``'0.64'``.

    Examples
    --------
    >>> format_exact_percent(0.0064), format_exact_percent(0.0013)
    ('0.64', '0.13')
    """
    d = Decimal(repr(fraction)).scaleb(2).normalize()
    return format(d, "f")


def decimals_for(tolerance: float) -> int:
    """Decimals that show the leading digit of a tolerance δ (0 for δ ≥ 1; 6 if undefined)."""
    if not (tolerance > 0 and math.isfinite(tolerance)):
        return 6
    return max(0, -math.floor(math.log10(tolerance) + 1e-12))


def format_like(x: float, tolerance: float) -> str:
    """``x`` with the decimals of :func:`decimals_for` (``tolerance``)."""
    return f"{x:.{decimals_for(tolerance)}f}"


def format_cost(x: float) -> str:
    """A cost with thousands separators and no decimals unless it has cents: ``'4,200'``."""
    return f"{x:,.0f}" if float(x).is_integer() else f"{x:,.2f}"


def percent_change(before: float, after: float) -> str:
    """``' (−12.3 %)'`` — the relative change from ``before`` — or ``''`` when before = 0."""
    if before == 0:
        return ""
    return f" ({100 * (after - before) / before:+.1f} %)"


# ----------------------------------------------------------------------------- budgets
def statement(result: BudgetResult, digits: int = 2) -> str:
    """The result statement, e.g. ``'ν = (46.053 ± 0.084) mm²/s, k = 2.00, p ≈ 95.45 %
    (relative U = 0.18 %)'`` (JCGM 100:2008, 7.2.6, with the budget's rounding rule).

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("nu", "a + b", [InputQuantity.normal("a", 1.0, 0.3, "mm^2/s"),
    ...                                         InputQuantity.normal("b", 2.0, 0.4, "mm^2/s")],
    ...                         "mm^2/s")
    >>> statement(b.evaluate())
    'ν = (3.0 ± 1.0) mm²/s, k = 2.00, p ≈ 95.45 % (relative U = 33 %)'
    """
    name = symbol(result.measurand)
    unit = unit_suffix(result.unit)
    if result.expanded_uncertainty <= 0:
        return f"{name} = {result.value:.10g}{unit} (exactly known inputs)"
    r = result.rounded(digits)
    text = f"{name} = ({r.value} ± {r.uncertainty}){unit}"
    text += (
        f", k = {result.coverage_factor:.2f}, p ≈ {format_percent(result.coverage_probability)} %"
    )
    rel = result.relative_expanded_uncertainty
    if math.isfinite(rel):
        text += f" (relative U = {format_relative(rel)})"
    return text


#: Column headers of the budget table (text, HTML, Markdown, LaTeX).
HEADERS = [
    "quantity", "estimate", "unit", "u(x)", "distribution", "type", "dof",
    "c", "unit of c", "rel. c", "c·u(x)", "share",
]  # fmt: skip


def table_rows(result: BudgetResult, value_digits: int = 8) -> list[list[str]]:
    """Display cells of the budget table (see :data:`HEADERS`): one row per input, then one
    per correlation term. Shared by the text, HTML and exported reports."""
    rows = []
    for c in result.contributions:
        rows.append(
            [
                c.name, f"{c.value:.{value_digits}g}", format_unit(c.unit) or "1",
                format_number(c.standard_uncertainty, 3), c.distribution, c.evaluation,
                format_dof(c.dof), format_number(c.sensitivity, 4), c.sensitivity_unit or "1",
                format_number(c.relative_sensitivity, 4), format_number(c.contribution, 3),
                f"{100 * c.variance_share:.1f} %",
            ]
        )  # fmt: skip
    for t in result.cross_terms:
        signed = math.copysign(math.sqrt(abs(t.covariance_term)), t.covariance_term)
        rows.append(
            [f"r({t.first}, {t.second}) = {t.coefficient:g}"] + [""] * 9
            + [format_number(signed, 3), f"{100 * t.variance_share:.1f} %"]
        )  # fmt: skip
    return rows


def _shows_large_dof(result: BudgetResult) -> bool:
    dofs = [result.effective_dof, *(c.dof for c in result.contributions)]
    return any(math.isfinite(n) and n > DOF_SHOWN_AS_INFINITE for n in dofs)


def summary_lines(result: BudgetResult) -> list[str]:
    """The combined result in words: y, u_c, ν_eff, k, U, the propagation, the statement,
    the warnings (one line each)."""
    unit = unit_suffix(result.unit)
    name = symbol(result.measurand)
    dof = format_dof(result.effective_dof)
    if math.isfinite(result.effective_dof) and dof != "∞":
        dof += f" (truncated to {format_dof(result.effective_dof_used)})"
    lines = [
        f"{name} = {result.value:.10g}{unit}",
        f"combined standard uncertainty u_c = {result.standard_uncertainty:.4g}{unit}",
        f"effective degrees of freedom ν_eff = {dof}",
        f"coverage factor k = {result.coverage_factor:.3f} ({result.coverage_factor_source}), "
        f"expanded uncertainty U = {result.expanded_uncertainty:.4g}{unit}",
        f"propagation: {result.propagation}",
        "result: " + statement(result),
    ]
    if _shows_large_dof(result):
        lines.append(f"note: {DOF_NOTE}")
    lines += [f"warning: {one_line(w)}" for w in result.warnings]
    return lines


def _title(result: BudgetResult) -> str:
    """The budget's title on one line (control characters escaped), or a made-up one."""
    return one_line(result.budget.title) or f"Uncertainty budget of {symbol(result.measurand)}"


def model_line(result: BudgetResult) -> str:
    """``'model: ν = C*t - E/t**2'`` (or the built-in model's name and equation)."""
    budget = result.budget
    model = budget.model
    formula = one_line(model.formula or str(model.expression))
    text = f"model: {symbol(model.output_name)} = {formula}"
    if budget.method is not None:
        text += f"   (built-in model {budget.method.name})"
    return text


def budget_text(result: BudgetResult) -> str:
    """A fixed-width text table plus the summary lines and warnings."""
    rows = table_rows(result)
    widths = [max(len(h), *(len(r[i]) for r in rows)) for i, h in enumerate(HEADERS)]
    out = [_title(result), model_line(result)]
    out.append("  ".join(h.ljust(w) for h, w in zip(HEADERS, widths, strict=True)).rstrip())
    out.append("  ".join("-" * w for w in widths))
    for r in rows:
        out.append("  ".join(v.ljust(w) for v, w in zip(r, widths, strict=True)).rstrip())
    out.append("")
    out += summary_lines(result)
    return "\n".join(out)


def budget_html(result: BudgetResult) -> str:
    """An HTML table for Jupyter: budget rows, then the summary (warnings in their own list)."""
    e = html.escape
    head = "".join(f"<th>{e(h)}</th>" for h in HEADERS)
    body = "".join(
        "<tr>" + "".join(f"<td>{e(v)}</td>" for v in r) + "</tr>" for r in table_rows(result)
    )
    lines = [line for line in summary_lines(result) if not line.startswith("warning: ")]
    summary = "<br>".join(e(line) for line in lines)
    warn = "".join(f"<li>{e(w)}</li>" for w in result.warnings)
    warn_html = f"<ul class='viscometry-warnings'>{warn}</ul>" if warn else ""
    return (
        f"<div class='viscometry-budget'><b>{e(_title(result))}</b>"
        f"<div style='overflow-x:auto'><table><thead><tr>{head}</tr></thead>"
        f"<tbody>{body}</tbody></table></div><p>{summary}</p>{warn_html}</div>"
    )


# ----------------------------------------------------------------------------- Monte Carlo
def validation_statement(validation: ValidationResult, unit: str = "") -> str:
    """The validation outcome in words, δ, d_low and d_high to δ's resolution (JCGM 101, 8.2).

    Examples
    --------
    >>> from viscometry.gum.montecarlo import ValidationResult
    >>> validation_statement(ValidationResult("first-order", 0.0005, 0.00021, 0.00032, True))
    'first-order budget validated at δ = 0.0005 (d_low = 0.0002, d_high = 0.0003)'
    """
    v = validation
    if v.not_applicable:
        return f"{v.reference} budget not validated: {v.not_applicable}"
    u = unit_suffix(unit)
    verdict = "validated" if v.validated else "not validated"
    t = v.tolerance
    return (
        f"{v.reference} budget {verdict} at δ = {format_like(t, t)}{u} "
        f"(d_low = {format_like(v.d_low, t)}{u}, d_high = {format_like(v.d_high, t)}{u})"
    )


def simulation_lines(sim: BudgetSimulation) -> list[str]:
    """The Monte Carlo summary, the first-order comparison and the validation, line by line,
    then the warnings. Estimates and interval ends to δ's decimal, u to n_dig digits."""
    mc, fo = sim.mc, sim.first_order
    unit = unit_suffix(sim.unit)
    dec = decimals_for(sim.validation.tolerance)
    name = symbol(sim.measurand)
    seed = (
        "no seed (a generator was passed in; not repeatable from this record)"
        if mc.seed is None
        else f"seed {mc.seed}"
    )
    kind = "probabilistically symmetric" if mc.interval_kind == "symmetric" else "shortest"
    low, high = mc.interval
    f_low, f_high = sim.first_order_interval
    n = sim.significant_digits
    run = mc.note if mc.batches is not None else (
        "fixed number of trials; numerical stabilisation not assessed "
        "(adaptive procedure: JCGM 101:2008, 7.9.4)"
    )  # fmt: skip
    lines = [
        f"Monte Carlo method (JCGM 101:2008): {mc.trials} trials, {seed}",
        run,
        f"{name} = {mc.value:.{dec}f}{unit}, "
        f"u({name}) = {format_significant(mc.standard_uncertainty, n)}{unit}",
        f"{format_percent(mc.coverage_probability)} % coverage interval ({kind}): "
        f"[{low:.{dec}f}, {high:.{dec}f}]{unit}",
        f"{fo.propagation} (JCGM 100:2008): {name} = {fo.value:.{dec}f}{unit}, "
        f"u({name}) = {format_significant(fo.standard_uncertainty, n)}{unit}, "
        f"k = {fo.coverage_factor:.3f}, interval [{f_low:.{dec}f}, {f_high:.{dec}f}]{unit}",
        validation_statement(sim.validation, sim.unit),
    ]
    return lines + [f"warning: {one_line(w)}" for w in sim.warnings]


# ----------------------------------------------------------------------------- terminals
#: Unicode categories never printed as they are: controls (C0, DEL, C1), format characters
#: (bidirectional overrides and isolates, zero-width characters, the byte-order mark, soft
#: hyphen), line and paragraph separators, and lone surrogates (undecodable bytes of a file
#: name). Each is shown as an escape: ``\xNN``, ``\uNNNN`` or ``\UNNNNNNNN``.
UNSAFE_CATEGORIES = frozenset({"Cc", "Cf", "Zl", "Zp", "Cs"})
#: Name of the codec error handler :func:`ascii_fallback` (registered by the command line).
ASCII_FALLBACK = "viscometry-ascii"
#: Pieces of an error or warning line are cut to this many characters, the line to
#: :data:`MESSAGE_LIMIT` (:func:`message_line`).
MESSAGE_PIECE = 200
MESSAGE_LIMIT = 2000

# Every character outside printable ASCII is a candidate; _escape decides by category.
_CONTROL = re.compile(r"[^\x20-\x7e]")


def is_unsafe(char: str) -> bool:
    """True for a character of :data:`UNSAFE_CATEGORIES` (tab and newline included).

    Examples
    --------
    >>> [is_unsafe(c) for c in ("a", "η", "\\x1b", "\\u202e", "\\u200b", "\\u2028", "\\n")]
    [False, False, True, True, True, True, True]
    """
    return unicodedata.category(char) in UNSAFE_CATEGORIES


def _escape(match: re.Match[str]) -> str:
    char = match.group()
    if not is_unsafe(char):
        return char
    c = ord(char)
    if c < 0x100:
        return f"\\x{c:02x}"
    return f"\\u{c:04x}" if c < 0x10000 else f"\\U{c:08x}"


def _cut_middle(text: str, limit: int) -> str:
    """``text`` cut to ``limit`` characters by a ``…`` in the middle, its start kept longer."""
    if len(text) <= limit:
        return text
    head = max((2 * limit) // 3, 1)
    tail = max(limit - head - 1, 0)
    return text[:head] + "…" + (text[-tail:] if tail else "")


def one_line(text: str, limit: int | None = None, *, piece: int | None = None) -> str:
    """Text on one line for a terminal: whitespace folded, control, format (bidirectional,
    zero-width) and separator characters shown as escapes (so no file name or title can
    move the cursor, reorder the line or forge a line), and cut to ``limit`` characters
    with ``…``.

    Parameters
    ----------
    text : str
    limit : int, optional
        Length of the whole line; the end is cut off.
    piece : int, optional
        Length of each run of non-space characters (a 900 000-character key or value); the
        middle of a longer run is cut, so its start and end stay readable.

    Examples
    --------
    >>> one_line("a\\r\\nMATCH  b\\x1b[2J")
    'a MATCH b\\\\x1b[2J'
    >>> one_line("ok \\u202eKO\\u200b")
    'ok \\\\u202eKO\\\\u200b'
    >>> one_line("key " + "k" * 30 + " end", piece=10)
    'key kkkkkk…kkk end'
    """
    words = str(text).split()
    if piece is not None:
        words = [_cut_middle(w, piece) for w in words]
    safe = _CONTROL.sub(_escape, " ".join(words))
    if limit is not None and len(safe) > limit:
        return safe[: max(limit - 1, 0)] + "…"
    return safe


def message_line(text: str) -> str:
    """An error or warning message as one escaped line of readable length: each run of
    non-space characters at most :data:`MESSAGE_PIECE` characters, the line at most
    :data:`MESSAGE_LIMIT` (the start, which names the file and key, is kept).

    Examples
    --------
    >>> line = message_line("f.toml: [inputs." + "k" * 900_000 + "] too long")
    >>> len(line) < 300, line.startswith("f.toml: [inputs.kkk"), line.endswith("] too long")
    (True, True, True)
    """
    return one_line(text, MESSAGE_LIMIT, piece=MESSAGE_PIECE)


def escape_controls(text: str, keep: str = "\n\t") -> str:
    """``text`` with every unsafe character (see :data:`UNSAFE_CATEGORIES`) escaped except
    those in ``keep``; the last line of defence of the command line's output streams.

    Examples
    --------
    >>> escape_controls("a\\tb\\n\\x1b[2J\\r\\u2066")
    'a\\tb\\n\\\\x1b[2J\\\\x0d\\\\u2066'
    """
    if not keep:
        return _CONTROL.sub(_escape, text)
    return _CONTROL.sub(lambda m: m.group() if m.group() in keep else _escape(m), text)


def join_lines(lines: Sequence[str]) -> str:
    """Lines joined by newlines (each made safe with :func:`one_line`)."""
    return "\n".join(one_line(line) for line in lines)


# ASCII spellings for output streams that cannot encode a character (a C locale, an ASCII
# or Latin-1 terminal); unicodedata names give the other Greek letters.
_SPELLINGS = {
    "±": "+/-", "°": "deg", "∞": "inf", "µ": "u", "μ": "u", "·": "*", "⋅": "*", "•": "*",
    "×": "x", "≈": "~", "≃": "~", "≲": "<~", "≳": ">~", "∝": "~", "≥": ">=", "≤": "<=",
    "≠": "!=", "≪": "<<", "≫": ">>", "—": "-", "–": "-", "−": "-", "‐": "-", "‑": "-",
    "…": "...", "′": "'", "″": "''", "‘": "'", "’": "'", "“": '"', "”": '"', "«": '"',
    "»": '"', "√": "sqrt", "∑": "sum", "∂": "d", "→": "->", "←": "<-", "↔": "<->",
    "✓": "ok", "✗": "x", "½": "1/2", "¼": "1/4", "¾": "3/4", "€": "EUR", "£": "GBP",
    "℃": "degC", "\u2126": "Ohm", "Å": "Angstrom", "ℓ": "l", "§": "S.", "\u00a0": " ",
    "\u202f": " ", "\u2009": " ", "⌊": "floor(", "⌋": ")", "⌈": "ceil(", "⌉": ")",
}  # fmt: skip
_SUPERSCRIPTS = dict(zip("⁰¹²³⁴⁵⁶⁷⁸⁹⁺⁻⁼⁽⁾ⁿⁱ", "0123456789+-=()ni", strict=True))
_SUBSCRIPTS = dict(zip("₀₁₂₃₄₅₆₇₈₉₊₋₌₍₎ᵢⱼₙₖₘₓ", "0123456789+-=()ijnkmx", strict=True))


def _spell(char: str) -> str:
    if char in _SPELLINGS:
        return _SPELLINGS[char]
    name = unicodedata.name(char, "")
    for case, prefix in ((str.lower, "GREEK SMALL LETTER "), (str.title, "GREEK CAPITAL LETTER ")):
        letter = name.removeprefix(prefix)
        if letter != name and letter.isalpha() and " " not in letter:
            return case(letter)
    c = ord(char)
    if c < 0x100:
        return f"\\x{c:02x}"
    return f"\\u{c:04x}" if c < 0x10000 else f"\\U{c:08x}"


def ascii_spelling(text: str) -> str:
    """``text`` in ASCII: ``±`` → ``+/-``, ``°`` → ``deg``, ``∞`` → ``inf``, Greek letters by
    name (``η`` → ``eta``), ``µ`` → ``u``, ``·`` → ``*``, ``≤`` → ``<=``, superscripts as
    ``^`` and subscripts as ``_`` (``m⁻¹`` → ``m^-1``), anything else as an escape.

    Examples
    --------
    >>> ascii_spelling("η = (1.0016 ± 0.0013) mPa·s at 20 °C, ν_eff = ∞, m⁻¹, x₁")
    'eta = (1.0016 +/- 0.0013) mPa*s at 20 degC, nu_eff = inf, m^-1, x_1'
    """
    out: list[str] = []
    i = 0
    while i < len(text):
        char = text[i]
        for table, mark in ((_SUPERSCRIPTS, "^"), (_SUBSCRIPTS, "_")):
            if char in table:
                j = i
                while j < len(text) and text[j] in table:
                    j += 1
                out.append(mark + "".join(table[c] for c in text[i:j]))
                i = j
                break
        else:
            out.append(char if char < "\x80" else _spell(char))
            i += 1
    return "".join(out)


def ascii_fallback(error: UnicodeError) -> tuple[str, int]:
    """Codec error handler (registered as :data:`ASCII_FALLBACK`): the characters a stream
    cannot encode, written as :func:`ascii_spelling` does (superscripts that follow are
    taken along, so ``m⁻¹`` becomes ``m^-1`` on a Latin-1 terminal too).

    Examples
    --------
    >>> import codecs
    >>> codecs.register_error(ASCII_FALLBACK, ascii_fallback)
    >>> "ν = 1.5 mm²/s ± 2 % at ∞".encode("latin-1", ASCII_FALLBACK)
    b'nu = 1.5 mm\\xb2/s \\xb1 2 % at inf'
    """
    if not isinstance(error, UnicodeEncodeError):
        raise error
    text, start, end = error.object, error.start, error.end
    for table in (_SUPERSCRIPTS, _SUBSCRIPTS):
        if text[end - 1] in table:
            while end < len(text) and text[end] in table:
                end += 1
    return ascii_spelling(text[start:end]), end


# ----------------------------------------------------------------------------- planning
def required_text(r: RequiredUncertainty) -> str:
    """The answer of :func:`viscometry.planning.required_uncertainty` in words.

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> from viscometry.planning import required_uncertainty
    >>> b = Budget.from_formula("y", "a + b", [InputQuantity.normal("a", 1.0, 3.0),
    ...                                        InputQuantity.normal("b", 1.0, 4.0)],
    ...                         coverage_factor=2.0)
    >>> required_text(required_uncertainty(b, "b", 5.0))
    'unreachable even with u(b) = 0: the other inputs alone give U = 6 (the floor)'
    """
    u_unit, m_unit = unit_suffix(r.unit), unit_suffix(r.measurand_unit)
    name, req, now = r.name, r.required_uncertainty, r.current_uncertainty
    if not r.reachable:
        return (
            f"unreachable even with u({name}) = 0: the other inputs alone give "
            f"U = {r.floor:.3g}{m_unit} (the floor)"
        )
    if math.isinf(req):
        return f"U does not depend on u({name}); the target is met whatever u({name})"
    if r.already_met:
        return f"target already met; u({name}) may be as large as {req:.3g}{u_unit} (now {now:.3g}{u_unit})"
    factor = f", a factor {now / req:.3g} smaller" if req > 0 else ""
    return f"u({name}) must be at most {req:.3g}{u_unit} (now {now:.3g}{u_unit}{factor})"


def per_cost_text(reduction_per_cost: float) -> str:
    """Reduction of U per unit cost: ``'free'`` for a free improvement, else 3 digits."""
    if math.isinf(reduction_per_cost):
        return "free" if reduction_per_cost > 0 else "free, worse"
    return f"{reduction_per_cost:.3g}"


# ----------------------------------------------------------------------------- decisions
def _probability_words(p: float) -> str:
    """A probability as a percentage with one decimal, saying so at the extremes."""
    pct = 100.0 * p
    if pct < 0.1:
        return "less than 0.1 %"
    if pct > 99.9:
        return "more than 99.9 %"
    return f"{pct:.1f} %"


def _two_digits(x: float) -> str:
    """An uncertainty with two significant digits (JCGM 100:2008, 7.2.6), no exponent."""
    if x == 0.0:
        return "0"
    import numpy as np

    return str(np.format_float_positional(x, precision=2, unique=False, fractional=False)).rstrip(
        "."
    )


def decision_statement(decision: ConformityDecision, unit: str = "") -> str:
    """A conformity decision in words (JCGM 106:2012; ILAC G8:09/2019).

    Examples
    --------
    >>> from viscometry.conformity import decide
    >>> print(decision_statement(decide(9.88, 0.06, None, 10.0, rule="guarded"), "mm^2/s"))
    Accepted under guarded acceptance (w = 1.0·U = 0.12 mm²/s): the probability that the true value conforms is 97.7 %; the specific risk of a false accept is 2.3 %.
    """
    d = decision
    if d.rule == "guarded":
        r = f"{d.guard_factor:.3g}"
        r = r if ("." in r or "e" in r) else r + ".0"
        label = f" {unit_label(unit)}" if unit else ""
        how = f"guarded acceptance (w = {r}·U = {_two_digits(d.guard_band)}{label})"
    else:
        how = "simple acceptance (w = 0)"
    return (
        f"{'Accepted' if d.verdict == 'accept' else 'Rejected'} under {how}: the probability "
        f"that the true value conforms is {_probability_words(d.conformance_probability)}; the "
        f"specific risk of a {d.risk_kind} is {_probability_words(d.specific_risk)}."
    )


_SCORE_SYMBOL = {"E_n": "E_n", "z": "z", "z'": "z′", "zeta": "ζ"}


def score_statement(score: Score) -> str:
    """A proficiency score and its class in words, the number to two decimals (ISO 13528).

    Two decimals can hide which side of a threshold the score is on; the words then say so.

    Examples
    --------
    >>> from viscometry.proficiency import en_score, z_score
    >>> score_statement(en_score(1.0050, 0.0030, 1.0034, 0.0020))
    'E_n = 0.44: satisfactory, since |E_n| <= 1.'
    >>> score_statement(z_score(12.5, 10.0, 1.0))
    'z = 2.50: questionable (warning signal), since 2 < |z| < 3.'
    """
    from viscometry.proficiency import ACTION_LIMIT, EN_LIMIT, WARNING_LIMIT

    sym, a, cls = _SCORE_SYMBOL[score.kind], abs(score.value), score.classification
    if score.kind == "E_n":
        thresholds: tuple[float, ...] = (EN_LIMIT,)
        why = f"|{sym}| <= 1" if cls == "satisfactory" else f"|{sym}| > 1"
        label = cls
    else:
        thresholds = (WARNING_LIMIT, ACTION_LIMIT)
        why = {"satisfactory": f"|{sym}| <= 2", "questionable": f"2 < |{sym}| < 3",
               "unsatisfactory": f"|{sym}| >= 3"}[cls]  # fmt: skip
        label = {"satisfactory": cls, "questionable": "questionable (warning signal)",
                 "unsatisfactory": "unsatisfactory (action signal)"}[cls]  # fmt: skip
    shown = f"{score.value:.2f}"
    shown = "0.00" if shown == "-0.00" else shown
    note = ""
    for t in thresholds:
        if abs(float(shown)) == t and a != t:
            note = f" (|{sym}| just {'above' if a > t else 'below'} {t:g})"
    return f"{sym} = {shown}{note}: {label}, since {why}."


# ----------------------------------------------------------------------------- audits
#: Each audit verdict in words, and the colour it is shown in.
VERDICT_WORDS = {
    "match": ("recorded result confirmed", "#060"),
    "differs": ("differs from the record", "#a00"),
    "unrecorded": ("nothing recorded to compare with", "#a60"),
    "error": ("cannot be read or evaluated", "#a00"),
    "skipped": ("not audited", "#555"),
}


def audit_summary(counts: dict[str, int]) -> str:
    """One line for a whole audit, e.g. ``'audit PASSED: 20 budget files, 20 recorded results
    confirmed, 0 problems'`` (a file that differs or cannot be evaluated is a problem; files a
    folder search skipped are counted apart and never make an audit pass or fail)."""
    counts = dict(counts)
    skipped = counts.pop("skipped", 0)
    problems = counts.get("differs", 0) + counts.get("error", 0)
    total = sum(counts.values())
    note = f"; {skipped} skipped (listed in the table, not audited)" if skipped else ""
    return (
        f"audit {'PASSED' if problems == 0 else 'FAILED'}: {total} budget file(s), "
        f"{counts.get('match', 0)} recorded result(s) confirmed, "
        f"{counts.get('unrecorded', 0)} unrecorded, {problems} problem(s){note}"
    )


def audit_table_html(table: object) -> str:
    """The audit table (:func:`viscometry.audit.audit_table`) as HTML, each verdict in words and
    colour. Every cell is escaped (and put on one line, control characters shown as escapes)."""
    e = html.escape
    columns = list(table.columns)  # type: ignore[attr-defined]
    head = "".join(f"<th>{e(str(c))}</th>" for c in columns)
    rows = []
    for rec in table.to_dict(orient="records"):  # type: ignore[attr-defined]
        words, colour = VERDICT_WORDS.get(rec["verdict"], (rec["verdict"], "#000"))
        cells = []
        for c in columns:
            text = e(one_line(str(rec[c])))
            if c == "verdict":
                text = f"<b style='color:{colour}'>{e(rec['verdict'].upper())}</b> — {e(words)}"
            cells.append(f"<td>{text}</td>")
        rows.append("<tr>" + "".join(cells) + "</tr>")
    return (
        "<div style='overflow-x:auto'><table class='viscometry-audit'><thead><tr>"
        f"{head}</tr></thead><tbody>{''.join(rows)}</tbody></table></div>"
    )
