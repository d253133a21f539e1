"""Exportable reports of an evaluated budget: HTML, Markdown, LaTeX, CSV and JSON (edge layer).

:func:`render_report` turns a :class:`~viscometry.gum.budget.BudgetResult` into the text of
one report format; :func:`write_report` picks the format from a file's extension and writes
it through the package's one atomic writer (:mod:`viscometry.io.atomic`), so a reader never
sees a half-written report and a failed write leaves an existing file untouched.

Reports are reproducible byte for byte: they carry the budget's fingerprint and the package
version but no date or time, and embedded PNG charts carry no software metadata. Every
user-provided string (title, descriptions, sources, formula text) is escaped for the target
format: :func:`html.escape` for HTML, :func:`latex_escape` for LaTeX, :func:`markdown_escape`
for Markdown; CSV text cells are quoted and guarded against spreadsheet formulas.

The HTML report is self-contained and needs no network: the model and its sensitivity
coefficients are shown as MathML (rendered natively by current browsers) with their LaTeX
source beside them in ``<code>``, and the Pareto chart of variance shares is an embedded
``data:image/png;base64,`` image. A Content-Security-Policy forbids scripts and remote loads.

The CSV report is the budget table (one row per input, then one row per correlation term)
followed by a second section of ``# key: value`` lines with the result; read the table with
``pandas.read_csv(path, comment="#")``.
"""

from __future__ import annotations

import base64
import csv
import html
import math
import os
import re
from pathlib import Path
from typing import TYPE_CHECKING, Any, Literal

from viscometry.errors import InputError
from viscometry.text import (
    HEADERS,
    format_dof,
    format_number,
    format_unit,
    one_line,
    statement,
    symbol,
    table_rows,
)

if TYPE_CHECKING:  # pragma: no cover
    from viscometry.gum.budget import BudgetResult

__all__ = [
    "CAUTIONS",
    "FORMATS",
    "ReportFormat",
    "format_for_path",
    "latex_escape",
    "markdown_escape",
    "render_report",
    "write_audit_report",
    "write_report",
]

ReportFormat = Literal["html", "md", "tex", "csv", "json"]

#: Report formats by file extension (lower case, with the dot).
FORMATS: dict[str, ReportFormat] = {
    ".html": "html",
    ".htm": "html",
    ".md": "md",
    ".tex": "tex",
    ".csv": "csv",
    ".json": "json",
}

_ALIASES: dict[str, ReportFormat] = {
    "html": "html",
    "htm": "html",
    "md": "md",
    "markdown": "md",
    "tex": "tex",
    "latex": "tex",
    "csv": "csv",
    "json": "json",
}

#: The cautions every full report ends with (plain text; escaped per format).
CAUTIONS: tuple[str, ...] = (
    "Safety: capillary viscometry can involve hot liquid baths, solvents and acids used for "
    "cleaning, glassware under suction or pressure, and mercury (in thermometers and "
    "manometers). Follow your local codes and regulations, your laboratory's own procedures "
    "and accredited practice; this report does not replace them.",
    "Conformity: this report states a measurement result and its uncertainty only. A "
    "statement of conformity with a specification needs a decision rule agreed beforehand "
    "(see JCGM 106:2012 and ISO/IEC 17025:2017, 7.8.6).",
    "Method: law of propagation of uncertainty, JCGM 100:2008 (GUM), 5.1.2 and 5.2.2; "
    "effective degrees of freedom by the Welch-Satterthwaite formula, G.4.1; rounding, 7.2.6.",
)


# --------------------------------------------------------------------------- escaping
_LATEX_SPECIALS = {
    "&": r"\&",
    "%": r"\%",
    "$": r"\$",
    "#": r"\#",
    "_": r"\_",
    "{": r"\{",
    "}": r"\}",
    "~": r"\textasciitilde{}",
    "^": r"\textasciicircum{}",
    "\\": r"\textbackslash{}",
    # Characters the units and statements use, written without extra packages.
    "±": r"\ensuremath{\pm}",
    "≈": r"\ensuremath{\approx}",
    "·": r"\ensuremath{\cdot}",
    "×": r"\ensuremath{\times}",
    "−": r"\ensuremath{-}",
    "∞": r"\ensuremath{\infty}",
    "ν": r"\ensuremath{\nu}",
    "Ω": r"\ensuremath{\Omega}",
    "µ": r"\textmu{}",
    "μ": r"\textmu{}",
    "°": r"\textdegree{}",
    "⁰": r"\textsuperscript{0}",
    "¹": r"\textsuperscript{1}",
    "²": r"\textsuperscript{2}",
    "³": r"\textsuperscript{3}",
    "⁴": r"\textsuperscript{4}",
    "⁵": r"\textsuperscript{5}",
    "⁶": r"\textsuperscript{6}",
    "⁷": r"\textsuperscript{7}",
    "⁸": r"\textsuperscript{8}",
    "⁹": r"\textsuperscript{9}",
    "⁻": r"\textsuperscript{-}",
    "\u00a0": "~",
    "\u2009": r"\,",
    "\u202f": r"\,",
    "\n": " ",
    "\r": " ",
    "\t": " ",
}


def latex_escape(text: str) -> str:
    r"""Escape text for LaTeX text mode.

    The ten special characters ``& % $ # _ { } ~ ^ \`` become commands that print them;
    the few non-ASCII symbols the package writes (±, ≈, ·, µ, superscript digits, ...) become
    kernel commands, so the fragment compiles with a plain ``pdflatex`` (UTF-8 input) without
    extra packages. Line breaks become spaces (a user string can never end a ``%`` comment
    or start a paragraph).

    Parameters
    ----------
    text : str
        Any user-provided or computed text.

    Returns
    -------
    str

    Examples
    --------
    >>> print(latex_escape("50% & _x_"))
    50\% \& \_x\_
    >>> print(latex_escape("{a}~^\\"))
    \{a\}\textasciitilde{}\textasciicircum{}\textbackslash{}
    """
    return "".join(_LATEX_SPECIALS.get(ch, ch) for ch in str(text))


_MD_SPECIALS = re.compile(r"([\\`*_\[\]|#])")


def markdown_escape(text: str) -> str:
    r"""Escape text for a Markdown paragraph or table cell.

    HTML is neutralised (``<``, ``>``, ``&`` become entities, since Markdown passes raw HTML
    through), the characters ``\ ` * _ [ ] | #`` are backslash-escaped, and line breaks
    become spaces (a table row stays one line).

    Examples
    --------
    >>> markdown_escape("<b>a|b</b>_x_")
    '&lt;b&gt;a\\|b&lt;/b&gt;\\_x\\_'
    """
    text = html.escape(str(text), quote=False)
    text = _MD_SPECIALS.sub(r"\\\1", text)
    return " ".join(text.split()) if ("\n" in text or "\r" in text) else text


def _csv_text(text: str) -> str:
    """A text cell a spreadsheet will not run as a formula (OWASP CSV injection advice)."""
    text = str(text)
    if text and text[0] in "=+-@\t\r":
        return "'" + text
    return text


# --------------------------------------------------------------------------- the content
def format_for_path(path: str | os.PathLike[str]) -> ReportFormat:
    """The report format of a file name, from its extension.

    Parameters
    ----------
    path : path-like
        Output file; its extension (case-insensitive) is one of :data:`FORMATS`.

    Returns
    -------
    {"html", "md", "tex", "csv", "json"}

    Raises
    ------
    InputError
        For any other extension; the message names the path and the allowed extensions.

    Examples
    --------
    >>> format_for_path("out/budget.HTML")
    'html'
    """
    suffix = Path(path).suffix.lower()
    try:
        return FORMATS[suffix]
    except KeyError:
        allowed = ", ".join(sorted(FORMATS))
        raise InputError(
            f"report path {str(path)!r} has extension {suffix or '(none)'!r}; "
            f"allowed extensions: {allowed}"
        ) from None


def _normalise_format(fmt: str) -> ReportFormat:
    key = str(fmt).lower().lstrip(".")
    try:
        return _ALIASES[key]
    except KeyError:
        allowed = ", ".join(sorted(set(_ALIASES.values())))
        raise InputError(f"report format must be one of {allowed}, got {fmt!r}") from None


def _title(result: BudgetResult) -> str:
    # One line in every format: a newline in a title would break a Markdown heading or a
    # LaTeX paragraph, and control characters have no place in a report.
    return one_line(result.budget.title) or f"Uncertainty budget of {symbol(result.measurand)}"


_unit = format_unit


def _rows(result: BudgetResult) -> list[list[str]]:
    """Display cells of the budget table, estimates to 10 significant digits."""
    return table_rows(result, value_digits=10)


def _headers(result: BudgetResult) -> list[str]:
    unit = _unit(result.unit)
    heads = list(HEADERS)
    if unit:
        heads[10] = f"c·u(x) / {unit}"
    return heads


def _summary(result: BudgetResult) -> list[tuple[str, str]]:
    """(label, value) pairs of the combined result, in display form."""
    unit = _unit(result.unit)
    u = f" {unit}" if unit else ""
    dof = format_dof(result.effective_dof)
    if math.isfinite(result.effective_dof) and result.effective_dof_used != result.effective_dof:
        dof += f" (truncated to {format_dof(result.effective_dof_used)})"
    rel = result.relative_expanded_uncertainty
    rel_text = f"{100 * rel:.3g} %" if math.isfinite(rel) else "not defined (y = 0)"
    p = f"{100 * result.coverage_probability:.4g} %"
    return [
        ("estimate y", f"{result.value:.10g}{u}"),
        (
            "combined standard uncertainty u_c(y)",
            f"{format_number(result.standard_uncertainty, 4)}{u}",
        ),
        ("effective degrees of freedom ν_eff", dof),
        ("coverage probability p", p),
        ("coverage factor k", f"{result.coverage_factor:.3f} ({result.coverage_factor_source})"),
        ("expanded uncertainty U", f"{format_number(result.expanded_uncertainty, 4)}{u}"),
        ("relative expanded uncertainty U/|y|", rel_text),
        ("propagation", result.propagation),
    ]


def _version() -> str:
    from viscometry import __version__

    return __version__


#: Expressions of more nodes than this are not typeset in reports (printing a derivative of
#: 10⁵ nodes as LaTeX and MathML takes longer than deriving it); the report says so instead.
MAX_PRINTED_NODES = 2000


def _too_big(expr: Any) -> str | None:
    """A note in place of an expression too big to typeset, or None."""
    from viscometry.gum.formula import expression_size

    if expression_size(expr, MAX_PRINTED_NODES) > MAX_PRINTED_NODES:
        return f"(an expression of more than {MAX_PRINTED_NODES} terms; not typeset)"
    return None


def _latex_of(expr: Any) -> str:
    import sympy as sp

    note = _too_big(expr)
    return rf"\text{{{note}}}" if note else sp.latex(expr)


def _model_latex(result: BudgetResult) -> tuple[str, list[tuple[str, str]]]:
    """LaTeX of ``y = f(x)`` and of each ``∂f/∂x_i = ...`` (sympy's printer)."""
    import sympy as sp

    model = result.budget.model
    y = sp.latex(sp.Symbol(model.output_name))
    equation = f"{y} = {_latex_of(model.expression)}"
    sens = []
    for name in model.input_names:
        x = sp.latex(model.symbol(name))
        d = _latex_of(model.derivative(name))
        sens.append((name, rf"\frac{{\partial {y}}}{{\partial {x}}} = {d}"))
    return equation, sens


def _model_mathml(result: BudgetResult) -> tuple[str, list[str]]:
    """Presentation MathML of the model equation and of each sensitivity coefficient."""
    import sympy as sp
    from sympy.printing.mathml import mathml

    model = result.budget.model
    y = mathml(sp.Symbol(model.output_name), printer="presentation")

    def wrap(inner: str) -> str:
        return f'<math xmlns="http://www.w3.org/1998/Math/MathML" display="block">{inner}</math>'

    def of(expr: Any) -> str:
        note = _too_big(expr)
        return (
            f"<mtext>{html.escape(note)}</mtext>" if note else mathml(expr, printer="presentation")
        )

    equation = wrap(f"<mrow>{y}<mo>=</mo>{of(model.expression)}</mrow>")
    sens = []
    for name in model.input_names:
        x = mathml(model.symbol(name), printer="presentation")
        frac = f"<mfrac><mrow><mo>&#8706;</mo>{y}</mrow><mrow><mo>&#8706;</mo>{x}</mrow></mfrac>"
        d = of(model.derivative(name))
        sens.append(wrap(f"<mrow>{frac}<mo>=</mo>{d}</mrow>"))
    return equation, sens


def _pareto_png(result: BudgetResult) -> bytes | None:
    """The Pareto chart of variance shares as PNG bytes, or None when there are no shares."""
    shares = [c.variance_share for c in result.contributions]
    shares += [t.variance_share for t in result.cross_terms]
    if not shares or not all(math.isfinite(s) for s in shares):
        return None
    from viscometry.plots import figure_png, pareto_figure

    return figure_png(pareto_figure(result), dpi=80.0)


# --------------------------------------------------------------------------- renderers
_CSS = """
body{font-family:sans-serif;max-width:72em;margin:1em auto;padding:0 1em;color:#111}
table{border-collapse:collapse;margin:0.5em 0 1em}
th,td{border:1px solid #999;padding:0.2em 0.5em;vertical-align:top}
th{background:#eee}
td.n{text-align:right;font-variant-numeric:tabular-nums}
.statement{font-size:1.2em;font-weight:bold}
.warnings li{color:#8a4b00}
code{white-space:pre-wrap}
footer{border-top:1px solid #999;margin-top:2em;font-size:0.9em;color:#333}
""".strip()

_NUMERIC = {1, 3, 6, 7, 9, 10, 11}


def _render_html(result: BudgetResult, fingerprint: str | None, figures: bool) -> str:
    e = html.escape
    title = _title(result)
    out: list[str] = [
        "<!DOCTYPE html>",
        '<html lang="en">',
        "<head>",
        '<meta charset="utf-8">',
        '<meta http-equiv="Content-Security-Policy" '
        "content=\"default-src 'none'; img-src data:; style-src 'unsafe-inline'\">",
        f"<title>{e(title)}</title>",
        f"<style>{_CSS}</style>",
        "</head>",
        "<body>",
        f"<h1>{e(title)}</h1>",
        f'<p class="statement">{e(statement(result))}</p>',
    ]
    out += _html_model(result) + _html_budget(result) + _html_result(result)
    if figures:
        png = _pareto_png(result)
        if png is not None:
            data = base64.b64encode(png).decode("ascii")
            out += [
                "<h2>Variance shares</h2>",
                f'<img alt="Pareto chart of the variance shares of {e(result.measurand)}" '
                f'src="data:image/png;base64,{data}">',
            ]
    out += [
        "<h2>Provenance</h2>",
        "<table><tbody>",
        f"<tr><th>fingerprint</th><td><code>{e(fingerprint or 'not available')}</code></td></tr>",
        f"<tr><th>software</th><td>viscometry {e(_version())}</td></tr>",
        "</tbody></table>",
        "<footer>",
        *(f"<p>{e(text)}</p>" for text in CAUTIONS),
        "</footer>",
        "</body>",
        "</html>",
        "",
    ]
    return "\n".join(out)


def _html_model(result: BudgetResult) -> list[str]:
    """The model as written, as MathML with its LaTeX, and the sensitivity coefficients."""
    e = html.escape
    model = result.budget.model
    eq_latex, sens_latex = _model_latex(result)
    eq_mathml, sens_mathml = _model_mathml(result)
    out = ["<h2>Measurement model</h2>"]
    if model.formula:
        out.append(f"<p>As written: <code>{e(model.output_name)} = {e(model.formula)}</code></p>")
    out += [
        eq_mathml,
        f"<p>LaTeX: <code>{e(eq_latex)}</code></p>",
        "<h2>Sensitivity coefficients</h2>",
        "<table><thead><tr><th>quantity</th><th>∂f/∂x</th><th>LaTeX</th><th>value</th></tr>"
        "</thead><tbody>",
    ]
    by_name = {c.name: c for c in result.contributions}
    for (name, tex), mm in zip(sens_latex, sens_mathml, strict=True):
        c = by_name.get(name)
        value = ""
        if c is not None:
            value = format_number(c.sensitivity, 4)
            if c.sensitivity_unit and c.sensitivity_unit != "1":
                value += f" {c.sensitivity_unit}"
        out.append(
            f"<tr><td>{e(name)}</td><td>{mm}</td><td><code>{e(tex)}</code></td>"
            f'<td class="n">{e(value)}</td></tr>'
        )
    out.append("</tbody></table>")
    out.append(
        "<p>The symbolic coefficients apply to the quantities in SI units; the value column "
        "gives them in the units of the budget.</p>"
    )
    return out


def _html_budget(result: BudgetResult) -> list[str]:
    """The budget table with descriptions and sources, and the constants."""
    e = html.escape
    out = ["<h2>Uncertainty budget</h2>"]
    heads = _headers(result) + ["description", "source"]
    out.append("<table><thead><tr>" + "".join(f"<th>{e(h)}</th>" for h in heads) + "</tr></thead>")
    out.append("<tbody>")
    texts = [(c.description, c.source) for c in result.contributions]
    texts += [("", "")] * len(result.cross_terms)
    for row, (desc, src) in zip(_rows(result), texts, strict=True):
        cells = "".join(
            f'<td class="n">{e(v)}</td>' if i in _NUMERIC else f"<td>{e(v)}</td>"
            for i, v in enumerate(row)
        )
        out.append(f"<tr>{cells}<td>{e(desc)}</td><td>{e(src)}</td></tr>")
    out.append("</tbody></table>")
    if result.budget.constants:
        out.append("<h3>Constants (exactly known)</h3><table><thead><tr><th>name</th>"
                   "<th>value</th><th>unit</th><th>description</th><th>source</th></tr></thead><tbody>")  # fmt: skip
        for k in result.budget.constants:
            out.append(
                f'<tr><td>{e(k.name)}</td><td class="n">{k.value:.10g}</td>'
                f"<td>{e(_unit(k.unit) or '1')}</td><td>{e(k.description)}</td>"
                f"<td>{e(k.source)}</td></tr>"
            )
        out.append("</tbody></table>")
    return out


def _html_result(result: BudgetResult) -> list[str]:
    """The combined result, the statement and the warnings."""
    e = html.escape
    out = ["<h2>Result</h2><table><tbody>"]
    for label, value in _summary(result):
        out.append(f'<tr><th>{e(label)}</th><td class="n">{e(value)}</td></tr>')
    out.append(f"<tr><th>result statement</th><td>{e(statement(result))}</td></tr>")
    out.append("</tbody></table>")
    out.append("<h2>Warnings</h2>")
    if result.warnings:
        out += ['<ul class="warnings">', *(f"<li>{e(w)}</li>" for w in result.warnings), "</ul>"]
    else:
        out.append("<p>None.</p>")
    return out


def _render_markdown(result: BudgetResult, fingerprint: str | None) -> str:
    m = markdown_escape
    eq_latex, sens_latex = _model_latex(result)
    heads = _headers(result)
    out = [
        f"# {m(_title(result))}",
        "",
        f"**Result:** {m(statement(result))}",
        "",
        "## Measurement model",
        "",
        "```math",
        eq_latex,
        "```",
        "",
        "Sensitivity coefficients (symbolic, for the quantities in SI units):",
        "",
        "```math",
        *(tex for _, tex in sens_latex),
        "```",
        "",
        "## Uncertainty budget",
        "",
        "| " + " | ".join(m(h) for h in heads) + " |",
        "|" + "|".join("---:" if i in _NUMERIC else "---" for i in range(len(heads))) + "|",
    ]
    out += ["| " + " | ".join(m(v) for v in row) + " |" for row in _rows(result)]
    sources = [c for c in result.contributions if c.description or c.source]
    if sources:
        out += ["", "Inputs:", ""]
        for c in sources:
            parts = [p for p in (c.description, f"source: {c.source}" if c.source else "") if p]
            out.append(f"- {m(c.name)}: {m('; '.join(parts))}")
    out += ["", "## Result", "", "| quantity | value |", "|---|---:|"]
    out += [f"| {m(label)} | {m(value)} |" for label, value in _summary(result)]
    out += ["", "## Warnings", ""]
    out += [f"- {m(w)}" for w in result.warnings] or ["None."]
    out += [
        "",
        f"Fingerprint: `{one_line(fingerprint or 'not available').replace('`', '')}`  ",
        f"Software: viscometry {m(_version())}",
        "",
        "---",
        "",
    ]
    out += [f"{m(text)}\n" for text in CAUTIONS]
    return "\n".join(out)


def _render_latex(result: BudgetResult, fingerprint: str | None) -> str:
    t = latex_escape
    heads = _headers(result)
    spec = "".join("r" if i in _NUMERIC else "l" for i in range(len(heads)))
    out = [
        f"% Uncertainty budget, viscometry {one_line(_version())}; "
        f"fingerprint {one_line(fingerprint or 'not available')}",
        "% Fragment: \\input{} it into a document (UTF-8, no extra packages needed).",
        "\\begin{center}",
        f"\\textbf{{{t(_title(result))}}}\\par\\medskip",
        f"\\begin{{tabular}}{{{spec}}}",
        "\\hline",
        " & ".join(t(h) for h in heads) + " \\\\",
        "\\hline",
    ]
    out += [" & ".join(t(v) for v in row) + " \\\\" for row in _rows(result)]
    out += ["\\hline", "\\end{tabular}", "\\end{center}", ""]
    described = [c for c in result.contributions if c.description or c.source]
    if described:
        out += [
            "\\begin{center}",
            "\\begin{tabular}{lp{0.42\\linewidth}p{0.42\\linewidth}}",
            "\\hline",
            "quantity & description & source \\\\",
            "\\hline",
        ]
        out += [f"{t(c.name)} & {t(c.description)} & {t(c.source)} \\\\" for c in described]
        out += ["\\hline", "\\end{tabular}", "\\end{center}", ""]
    out.append(f"\\noindent Result: {t(statement(result))}\\par")
    for w in result.warnings:
        out.append(f"\\noindent Warning: {t(w)}\\par")
    out.append("")
    return "\n".join(out)


def _render_csv(result: BudgetResult, fingerprint: str | None) -> str:
    table = result.table()
    pad = [""] * len(result.cross_terms)
    table["description"] = [_csv_text(c.description) for c in result.contributions] + pad
    table["source"] = [_csv_text(c.source) for c in result.contributions] + pad
    table["quantity"] = [_csv_text(q) for q in table["quantity"]]
    body = table.to_csv(index=False, quoting=csv.QUOTE_NONNUMERIC, lineterminator="\n")
    unit = result.unit
    lines = [
        "# result (second section; read the table above with pandas.read_csv(path, comment='#'))",
        f"# title: {one_line(_title(result))}",
        f"# measurand: {result.measurand}",
        f"# unit: {one_line(_unit(unit))}",
        f"# value: {result.value!r}",
        f"# standard_uncertainty: {result.standard_uncertainty!r}",
        f"# effective_dof: {result.effective_dof!r}",
        f"# coverage_probability: {result.coverage_probability!r}",
        f"# coverage_factor: {result.coverage_factor!r}",
        f"# expanded_uncertainty: {result.expanded_uncertainty!r}",
        f"# relative_expanded_uncertainty: {result.relative_expanded_uncertainty!r}",
        f"# propagation: {result.propagation}",
        f"# statement: {one_line(statement(result))}",
    ]
    lines += [f"# warning: {one_line(w)}" for w in result.warnings]
    lines += [
        f"# fingerprint: {one_line(fingerprint or '')}",
        f"# version: viscometry {_version()}",
    ]
    return body + "\n".join(lines) + "\n"


def _render_json(result: BudgetResult, fingerprint: str | None) -> str:
    from viscometry.io.json_out import dumps, result_to_dict

    return dumps(result_to_dict(result, kind="report")) + "\n"


# --------------------------------------------------------------------------- public API
def render_report(result: BudgetResult, fmt: str, *, figures: bool = True) -> str:
    """Render an evaluated budget as report text.

    Parameters
    ----------
    result : BudgetResult
        The evaluated budget (measurand values in its unit, inputs in their own units).
    fmt : {"html", "md", "tex", "csv", "json"}
        Report format (also accepted: ``"markdown"``, ``"latex"``, ``"htm"``, a leading dot).
    figures : bool
        Embed the Pareto chart of variance shares (HTML only).

    Returns
    -------
    str
        The complete report; every format is text (UTF-8 when written), ending in a newline.

    Raises
    ------
    InputError
        For an unknown format.

    Notes
    -----
    The budget rows show cᵢ = ∂f/∂xᵢ, cᵢu(xᵢ) and the variance share (cᵢu(xᵢ))²/u_c², with
    u_c² = Σ cᵢ²u²(xᵢ) + 2 Σ r cᵢcⱼu(xᵢ)u(xⱼ) (JCGM 100:2008, 5.1.2 and 5.2.2); the output
    contains no date, so equal budgets give byte-identical reports.

    References
    ----------
    JCGM 100:2008, 7.2 (reporting the result) and 7.2.6 (rounding).

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("y", "a + b", [InputQuantity.normal("a", 1.0, 0.3, "mm"),
    ...                                        InputQuantity.normal("b", 2.0, 0.4, "mm")], "mm")
    >>> text = render_report(b.evaluate(), "md")
    >>> "y = (3.0 ± 1.0) mm" in text
    True
    """
    kind = _normalise_format(fmt)
    fp = result.fingerprint
    if kind == "html":
        return _render_html(result, fp, figures)
    if kind == "md":
        return _render_markdown(result, fp)
    if kind == "tex":
        return _render_latex(result, fp)
    if kind == "csv":
        return _render_csv(result, fp)
    return _render_json(result, fp)


def write_report(
    result: BudgetResult,
    path: str | os.PathLike[str],
    *,
    figures: bool = True,
    overwrite: bool = True,
    protect: Any = (),
) -> Path:
    """Write a report whose format follows the file extension, atomically.

    Parameters
    ----------
    result : BudgetResult
        The evaluated budget.
    path : path-like
        Output file ending in ``.html`` (or ``.htm``), ``.md``, ``.tex``, ``.csv`` or
        ``.json``; its directory must exist. An existing file is replaced only once the
        complete report has been rendered and written. A symbolic link is followed (its
        target is replaced, the link kept).
    figures : bool
        Embed the Pareto chart (HTML only).
    overwrite : bool
        False refuses to replace an existing file.
    protect : path-like, sequence or mapping
        Files the report must never replace, such as the budget file it reports on (under
        any name, also through links); see :func:`viscometry.io.atomic.check_output_path`.

    Returns
    -------
    pathlib.Path
        The written file.

    Raises
    ------
    InputError
        For an unknown extension (naming the path and the allowed extensions), a missing
        directory, or a failed write (the target is then unchanged).
    OutputError
        Before rendering, when the path is a protected file, write-protected, in a
        write-protected folder, not a file (folder, pipe, device) or a dangling link.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("y", "2*x", [InputQuantity.normal("x", 1.5, 0.1, "m")], "m")
    >>> with tempfile.TemporaryDirectory() as d:
    ...     p = write_report(b.evaluate(), pathlib.Path(d) / "r.json")
    ...     p.read_text().startswith("{")
    True
    """
    from viscometry.io.atomic import atomic_write_text, check_output_path

    target = Path(path)
    kind = format_for_path(target)
    directory = target.parent if str(target.parent) else Path(".")
    if not directory.is_dir():
        raise InputError(
            f"report path {str(target)!r}: directory {str(directory)!r} does not exist"
        )
    if not overwrite and (target.exists() or target.is_symlink()):
        raise InputError(f"report path {str(target)!r} exists already; not replaced")
    try:
        check_output_path(target, protect=protect, what="report path")  # before the work
    except OSError as exc:  # e.g. a name too long for the file system
        raise _cannot_write(target, exc) from None
    text = render_report(result, kind, figures=figures)
    try:
        return atomic_write_text(target, text, protect=protect, what="report path")
    except OSError as exc:
        raise _cannot_write(target, exc) from None


def _cannot_write(target: Path, exc: OSError) -> InputError:
    return InputError(f"report path {str(target)!r}: cannot write the file: {exc.strerror or exc}")


def write_audit_report(
    verdicts: Any,
    folder: str | os.PathLike[str],
    *,
    relative_to: Any = None,
    skipped: Any = (),
) -> list[Path]:
    """Write an audit's record into ``folder`` (created if missing): ``audit.html`` (the table
    with each verdict in words and colour, the summary, the software version and the cautions)
    and ``audit.csv`` (the same table), each written atomically.

    Parameters
    ----------
    verdicts : sequence of AuditVerdict
        From :func:`viscometry.audit.audit_paths`.
    folder : path-like
        Where the auditor keeps the record.
    relative_to : path-like, optional
        Show file names relative to this folder.
    skipped : sequence of Skipped, optional
        What the folder search left out (:attr:`viscometry.audit.AuditRun.skipped`): a row
        each, with the reason, so the record shows every file it did not audit.

    Returns
    -------
    list of pathlib.Path
        The files written.

    Raises
    ------
    InputError
        When the folder cannot be made or written (the message names it).
    OutputError
        When ``audit.html`` or ``audit.csv`` is one of the audited files (also through a
        link), write-protected, not a file, or a dangling link; or the folder is
        write-protected.
    """
    from viscometry.audit import audit_table
    from viscometry.io.atomic import atomic_write_text, check_output_path
    from viscometry.text import audit_summary, audit_table_html

    table = audit_table(verdicts, relative_to=relative_to, skipped=skipped)
    counts = table["verdict"].value_counts().to_dict()
    e = html.escape
    page = "\n".join([
        "<!DOCTYPE html>", '<html lang="en">', '<head><meta charset="utf-8">',
        '<meta http-equiv="Content-Security-Policy" '
        "content=\"default-src 'none'; style-src 'unsafe-inline'\">",
        "<title>Audit of budget files</title>", f"<style>{_CSS}</style></head><body>",
        "<h1>Audit of budget files</h1>", f'<p class="statement">{e(audit_summary(counts))}</p>',
        audit_table_html(table),
        f"<p>Recomputed with viscometry {e(_version())}; values and expanded uncertainties "
        "compared after the rounding of the result statement (JCGM 100:2008, 7.2.6), "
        "fingerprints of the budgets compared exactly.</p>",
        "<footer>", *(f"<p>{e(t)}</p>" for t in CAUTIONS), "</footer></body></html>", "",
    ])  # fmt: skip
    target = Path(folder)
    files = {target / "audit.html": page, target / "audit.csv": table.to_csv(index=False)}
    audited = {v.path: "an audited file" for v in verdicts}
    try:
        target.mkdir(parents=True, exist_ok=True)
        for name in files:  # refuse before either file is written
            check_output_path(name, protect=audited, what="audit record")
        return [
            atomic_write_text(name, text, protect=audited, what="audit record")
            for name, text in files.items()
        ]
    except OSError as exc:
        raise InputError(
            f"audit report folder {str(target)!r}: cannot write: {exc.strerror or exc}"
        ) from None
