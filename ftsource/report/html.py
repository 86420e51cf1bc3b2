"""The self-contained HTML report: one page, figures inline, no script, no network.

:func:`report_html` takes plain values (strings, numbers, tables as lists of rows) and PNG
bytes; every text goes through :func:`html.escape`, so text taken from a record (its file
name, metadata, column names) shows as text and never becomes markup. The page also carries a
Content-Security-Policy that allows no script at all and images only from ``data:`` URLs, so
even a mistake in escaping could not run code or reach the network.

References
----------
.. [1] WHATWG, "HTML Living Standard", §13.1 (syntax) and the ``meta http-equiv``
   Content-Security-Policy pragma; W3C, "Content Security Policy Level 3" (2023).
"""

from __future__ import annotations

import base64
import html
from dataclasses import dataclass, field

__all__ = ["ReportContent", "report_html", "CSP"]

#: No script, no styles from elsewhere, images only inline: the page needs nothing else.
CSP = "default-src 'none'; img-src data:; style-src 'unsafe-inline'; base-uri 'none'; " \
      "form-action 'none'"

_STYLE = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,sans-serif;margin:1.5em auto;
max-width:60em;padding:0 1em;color:#111;line-height:1.4}
h1{font-size:1.5em;margin-bottom:.2em}h2{font-size:1.2em;border-bottom:1px solid #999;
margin-top:1.6em}table{border-collapse:collapse;margin:.5em 0;font-size:.92em}
th,td{border:1px solid #bbb;padding:.2em .5em;text-align:left;vertical-align:top}
th{background:#eee}td.num{text-align:right;font-variant-numeric:tabular-nums}
.poor{background:#fbe3d6}.good{background:#dcefe6}.safety{border:2px solid #D55E00;
padding:.5em 1em;background:#fff6ee}figure{margin:1em 0}figure img{max-width:100%;
height:auto;border:1px solid #ddd}figcaption{font-size:.9em;color:#333}
.warn li{margin-bottom:.3em}.meta{color:#444;font-size:.9em}
@media print{.safety{break-inside:avoid}figure{break-inside:avoid}}
"""


def _e(v) -> str:
    """Escaped text of any value (None as an em dash)."""
    if v is None:
        return "—"
    return html.escape(str(v), quote=True)


@dataclass(frozen=True)
class ReportContent:
    """Everything the page shows, as plain values.

    Tables are sequences of rows; each row a sequence of cells (any value; numbers are
    right-aligned). ``health`` rows are ``(item, value, verdict, threshold, source,
    advice)`` with verdict ``good``/``poor``/``note``. ``figures`` are ``(name, caption,
    png bytes)``.
    """

    title: str
    subtitle: str = ""
    results_header: tuple = ()
    results: tuple = ()
    lines_header: tuple = ()
    lines: tuple = ()
    budget_header: tuple = ()
    budget: tuple = ()
    budget_note: str = ""
    health: tuple = ()
    warnings: tuple = ()
    safety: tuple = ()
    settings: tuple = ()
    metadata: tuple = ()
    figures: tuple = field(default=(), repr=False)


def _table(header, rows, *, row_class=None) -> str:
    if not rows:
        return "<p>none</p>"
    out = ["<table>"]
    if header:
        out.append("<thead><tr>" + "".join(f"<th>{_e(h)}</th>" for h in header)
                   + "</tr></thead>")
    out.append("<tbody>")
    for r in rows:
        cls = row_class(r) if row_class else None
        cells = []
        for c in r:
            num = isinstance(c, int | float) and not isinstance(c, bool)
            cells.append(f'<td class="num">{_e(c)}</td>' if num else f"<td>{_e(c)}</td>")
        attr = f' class="{_e(cls)}"' if cls else ""
        out.append(f"<tr{attr}>" + "".join(cells) + "</tr>")
    out.append("</tbody></table>")
    return "".join(out)


def _figure(name: str, caption: str, png: bytes) -> str:
    data = base64.b64encode(png).decode("ascii")
    return (f'<figure id="fig-{_e(name)}"><img alt="{_e(caption)}" '
            f'src="data:image/png;base64,{data}"><figcaption>{_e(caption)}</figcaption>'
            "</figure>")


def report_html(content: ReportContent) -> str:
    """The page as text (UTF-8 HTML5). Deterministic: the same content gives the same page."""
    c = content
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        f'<meta http-equiv="Content-Security-Policy" content="{_e(CSP)}">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{_e(c.title)}</title><style>{_STYLE}</style></head><body>",
        f"<h1>{_e(c.title)}</h1>",
    ]
    if c.subtitle:
        parts.append(f'<p class="meta">{_e(c.subtitle)}</p>')
    parts.append('<section class="safety" id="safety"><h2>Safety</h2>'
                 + "".join(f"<p>{_e(s)}</p>" for s in c.safety) + "</section>")
    parts.append('<section id="results"><h2>Results</h2>'
                 + _table(c.results_header, c.results) + "</section>")
    figs = {name: (cap, png) for name, cap, png in c.figures}
    if "spectrum" in figs:
        parts.append(_figure("spectrum", *figs.pop("spectrum")))
    parts.append('<section id="lines"><h2>Lines found</h2>'
                 + _table(c.lines_header, c.lines) + "</section>")
    parts.append('<section id="health"><h2>Scan health</h2>'
                 + _table(("item", "value", "verdict", "threshold", "source", "advice"),
                          c.health, row_class=lambda r: r[2] if r[2] in ("good", "poor")
                          else None)
                 + "</section>")
    parts.append('<section id="warnings"><h2>Warnings</h2>'
                 + ('<ul class="warn">' + "".join(f"<li>{_e(w)}</li>" for w in c.warnings)
                    + "</ul>" if c.warnings else "<p>none</p>") + "</section>")
    parts.append('<section id="budget"><h2>Uncertainty budget</h2>'
                 + _table(c.budget_header, c.budget)
                 + (f"<p>{_e(c.budget_note)}</p>" if c.budget_note else "") + "</section>")
    if "budget" in figs:
        parts.append(_figure("budget", *figs.pop("budget")))
    if figs:
        parts.append('<section id="figures"><h2>The scan</h2>'
                     + "".join(_figure(n, cap, png) for n, (cap, png) in figs.items())
                     + "</section>")
    parts.append('<section id="settings"><h2>Processing settings and versions</h2>'
                 + _table(("setting", "value"), c.settings) + "</section>")
    parts.append('<section id="metadata"><h2>Record metadata</h2>'
                 + _table(("key", "value"), c.metadata) + "</section>")
    parts.append("</body></html>\n")
    return "\n".join(parts)
