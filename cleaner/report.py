"""A self-contained HTML data-quality report of one `cleaner clean` run: no
external assets, the bar charts drawn as inline SVG, every value escaped."""

from __future__ import annotations

from collections.abc import Mapping
from html import escape

from cleaner.engine import default_rules
from cleaner.filejob import Outcome

_BAR_HEIGHT, _LABEL_WIDTH, _BAR_WIDTH = 18, 300, 360

_STYLE = """
body { font: 14px/1.45 system-ui, sans-serif; margin: 2em auto; max-width: 60em; color: #222; }
h1 { font-size: 1.5em; } h2 { font-size: 1.15em; margin-top: 2em; }
table { border-collapse: collapse; } td, th { padding: .2em .8em; border-bottom: 1px solid #ddd;
text-align: left; } td.n { text-align: right; font-variant-numeric: tabular-nums; }
.note { background: #fff8e0; border-left: 4px solid #e0b000; padding: .6em 1em; }
code, pre { font-size: 12px; } pre { background: #f5f5f5; padding: .4em; overflow-x: auto; }
svg text { font: 12px system-ui, sans-serif; }
"""


def _bars(counts: Mapping[str, int], colour: str) -> str:
    """A horizontal bar chart of counts, largest first, as inline SVG."""
    if not counts:
        return "<p>None.</p>"
    largest = max(counts.values())
    rows = []
    for row, (label, count) in enumerate(sorted(counts.items(), key=lambda item: -item[1])):
        y = row * (_BAR_HEIGHT + 4)
        width = max(1, round(_BAR_WIDTH * count / largest))
        rows.append(
            f'<text x="{_LABEL_WIDTH - 6}" y="{y + 13}" text-anchor="end">{escape(label)}</text>'
            f'<rect x="{_LABEL_WIDTH}" y="{y}" width="{width}" height="{_BAR_HEIGHT}" '
            f'fill="{colour}"><title>{escape(label)}: {count}</title></rect>'
            f'<text x="{_LABEL_WIDTH + width + 6}" y="{y + 13}">{count:,}</text>')
    height = len(counts) * (_BAR_HEIGHT + 4)
    return (f'<svg xmlns="http://www.w3.org/2000/svg" width="{_LABEL_WIDTH + _BAR_WIDTH + 80}" '
            f'height="{height}" role="img">{"".join(rows)}</svg>')


def _table(rows: list[tuple[str, str]], headings: tuple[str, str]) -> str:
    body = "".join(f"<tr><td>{escape(label)}</td><td class=n>{escape(value)}</td></tr>"
                   for label, value in rows)
    return (f"<table><tr><th>{escape(headings[0])}</th><th>{escape(headings[1])}</th></tr>"
            f"{body}</table>")


def html(outcome: Outcome, source_name: str) -> str:
    summary = outcome.summary.as_json()
    reasons = default_rules().reasons
    totals = [("rows", f"{summary['rows']:,}"), ("rows changed", f"{summary['rows_changed']:,}"),
              ("rows flagged", f"{summary['rows_flagged']:,}"),
              ("rows that were not records", f"{summary['errors']:,}")]
    fill = [(key, f"{rate:.1%}") for key, rate in summary["fill_rate"].items()]
    examples = "".join(
        f"<h3><code>{escape(code)}</code> ({reasons[code].severity})</h3>"
        f"<p>{escape(reasons[code].description)}</p>"
        + "".join(f"<pre>{escape(row)}</pre>" for row in rows)
        for code, rows in sorted(outcome.examples.items()) if code in reasons)
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8">
<title>Data-quality report: {escape(source_name)}</title><style>{_STYLE}</style></head>
<body>
<h1>Data-quality report</h1>
<p>File: <code>{escape(source_name)}</code></p>
<p class=note>This report shows rows of your own file as examples; it holds the same patient
data as the file and needs the same care. The service standardises values; it does not decide
whether two records are the same person, and every <em>review</em> or <em>invalid</em> flag
needs a person to look at it.</p>
<h2>Totals</h2>{_table(totals, ("", "count"))}
<h2>Flags</h2>{_bars(summary["flags"], "#c0504d")}
<h2>Changes</h2>{_bars(summary["changes"], "#4f81bd")}
<h2>Fill rate per field</h2>{_table(fill, ("field", "rows with a value"))}
<h2>Examples of each flag</h2>{examples or "<p>No flags.</p>"}
</body></html>
"""
