"""One self-contained HTML report: summary, the plot, a sortable and filterable table of the
elements that are not ok, and a histogram per metric.

Nothing is loaded from the network: CSS and JavaScript are inline, the plot is an embedded
base64 PNG (reduced to a palette of 256 colours) and the histograms are inline SVG. The
table's script is plain JavaScript written here; without JavaScript the table still shows,
worst first.

Size: the table lists the not-ok elements, worst first, at most :data:`MAX_ROWS`; the
histograms are a fixed size; so the page grows with the mesh only through the plot
picture (fixed pixels) and is bounded whatever the mesh (see tests/test_html_size.py).

Histograms count on a logarithmic scale (bar height proportional to log(1 + count)), so a
single element is a visible bar (at least :data:`MIN_BAR` pixels) beside thousands; values
outside the drawn range are never dropped: an overflow bar at each end holds them (infinite
values included), labelled with its count and range.
"""

from __future__ import annotations

import base64
import io
import json
from html import escape
from pathlib import Path

import numpy as np

from .. import __version__
from ..mesh.elements import ElementMesh
from ..metrics import METRIC_INFO, METRIC_NAMES, VALIDITY_FLAGS, unit_of
from ..results.percentiles import linear_percentiles
from ..results.report import Report
from . import plot
from .plot import metric_limits
from .ranges import drawable_range
from .safe_text import html_safe
from .terminal import _fmt

#: The table lists at most this many elements (worst first); JSON and CSV list all.
MAX_ROWS = 500
HIST_BINS = 30
#: Smallest height in pixels of the bar of a non-empty bin.
MIN_BAR = 2.0
BAR = "#21918c"  # viridis mid-point

_CSS = """
body{font:14px/1.4 system-ui,sans-serif;margin:1.5em auto;max-width:1400px;padding:0 1em;
color:#222}
h1{font-size:1.4em;margin:.2em 0}h2{font-size:1.15em;margin-top:1.6em}
.verdict{display:inline-block;padding:.1em .5em;border:2px solid #222;font-weight:bold}
.verdict.fail{background:#222;color:#fff}
dl.facts{display:grid;grid-template-columns:max-content auto;gap:.15em 1em}
dl.facts dt{font-weight:bold}dl.facts dd{margin:0}
img.plot{max-width:100%;border:1px solid #ccc}
.controls{margin:.5em 0;display:flex;gap:1em;align-items:center;flex-wrap:wrap}
.controls input{font:inherit;padding:.2em .4em;min-width:22em}
table.elements{border-collapse:collapse;font-size:12.5px}
table.elements th,table.elements td{border:1px solid #ddd;padding:.15em .4em}
table.elements th{background:#f2f2f2;cursor:pointer;user-select:none;position:sticky;top:0}
table.elements th[aria-sort=ascending]::after{content:" \\25B2"}
table.elements th[aria-sort=descending]::after{content:" \\25BC"}
table.elements td.b{white-space:nowrap}
table.elements td.n{text-align:right;font-variant-numeric:tabular-nums}
tr.fail td:first-child{border-left:4px solid #222}
tr.warn td:first-child{border-left:4px dashed #222}
.hists{display:grid;grid-template-columns:repeat(auto-fill,minmax(330px,1fr));gap:1em}
.hists figure{margin:0}.hists figcaption{font-size:12px;color:#444}
.note{color:#555;font-size:12.5px}
.scroll{overflow-x:auto;max-height:80vh}
"""

_JS = """
(function () {
  var table = document.getElementById('elements');
  if (!table) { return; }
  var tbody = table.tBodies[0];
  var rows = Array.prototype.slice.call(tbody.rows);
  var heads = Array.prototype.slice.call(table.tHead.rows[0].cells);
  var filter = document.getElementById('filter');
  var verdict = document.getElementById('verdict-filter');
  var shown = document.getElementById('shown');
  var sortCol = -1, ascending = true;
  function key(row, col, numeric) {
    var cell = row.cells[col];
    if (!numeric) { return cell.textContent.toLowerCase(); }
    var v = cell.getAttribute('data-v');
    return (v === null || v === '') ? NaN : Number(v);
  }
  function compare(col, numeric, sign) {
    return function (a, b) {
      var x = key(a, col, numeric), y = key(b, col, numeric);
      if (numeric) {
        var xn = isNaN(x), yn = isNaN(y);
        if (xn || yn) { return xn === yn ? 0 : (xn ? 1 : -1); }  /* undefined last */
        return x === y ? 0 : (x < y ? -sign : sign);
      }
      return x === y ? 0 : (x < y ? -sign : sign);
    };
  }
  function sortBy(col) {
    ascending = (col === sortCol) ? !ascending : true;
    sortCol = col;
    var numeric = heads[col].getAttribute('data-type') === 'number';
    rows.sort(compare(col, numeric, ascending ? 1 : -1));
    rows.forEach(function (r) { tbody.appendChild(r); });
    heads.forEach(function (h, k) {
      if (k === col) { h.setAttribute('aria-sort', ascending ? 'ascending' : 'descending'); }
      else { h.removeAttribute('aria-sort'); }
    });
  }
  function applyFilter() {
    var terms = filter.value.toLowerCase().split(/\\s+/).filter(Boolean);
    var wanted = verdict.value, count = 0;
    rows.forEach(function (r) {
      var text = r.getAttribute('data-text');
      var ok = (wanted === 'all' || r.getAttribute('data-verdict') === wanted) &&
        terms.every(function (t) { return text.indexOf(t) >= 0; });
      r.hidden = !ok;
      if (ok) { count += 1; }
    });
    shown.textContent = String(count);
  }
  heads.forEach(function (h, k) { h.addEventListener('click', function () { sortBy(k); }); });
  filter.addEventListener('input', applyFilter);
  verdict.addEventListener('change', applyFilter);
  applyFilter();
})();
"""


def plot_png(report: Report, elements: ElementMesh, color_by: str) -> str:
    """The plot as a base64 PNG string, reduced to an adaptive palette of 256 colours
    (a plot of flat colours and lines loses nothing visible, and takes a third or less)."""
    buf = io.BytesIO()
    plot.draw(report, elements, color_by).savefig(buf, format="png", dpi=100)
    return base64.b64encode(compressed_png(buf.getvalue())).decode("ascii")


def compressed_png(data: bytes) -> bytes:
    """PNG ``data`` as a 256-colour palette PNG (Pillow, which matplotlib uses), or as it is
    when that is not smaller."""
    from PIL import Image

    image = Image.open(io.BytesIO(data)).convert("RGB")
    small = io.BytesIO()
    image.quantize(colors=256).save(small, format="PNG", optimize=True)
    return small.getvalue() if small.tell() < len(data) else data


def _number_cell(x: float, digits: str = ".4g") -> str:
    x = float(x)
    if np.isnan(x):
        return '<td class="n" data-v="">-</td>'
    v = json.dumps(x) if np.isfinite(x) else ("Infinity" if x > 0 else "-Infinity")
    return f'<td class="n" data-v="{v}">{escape(_fmt(x))}</td>'


def table_columns() -> list[tuple[str, str]]:
    """(header, type) of every table column; type is 'number' or 'text'."""
    cols = [("id", "number"), ("type", "text"), ("verdict", "text"), ("score", "number")]
    cols += [("invalid", "text"), ("breached (value / limit (level))", "text")]
    cols += [(m, "number") for m in METRIC_NAMES if m != "score"]
    return cols


def table_rows(report: Report) -> tuple[np.ndarray, list[str]]:
    """Report indices listed (worst first, capped) and their <tr> HTML."""
    rows = report.worst(only_flagged=True)[:MAX_ROWS]
    flag_text = report.flag_strings(", ")
    html = []
    for i in rows:
        i = int(i)
        breached = report.breached(i)
        breach_html = "<br>".join(
            escape(f"{m} {_fmt(v)} / {_fmt(lim)} ({lvl})") for m, (v, lvl, lim) in breached.items()
        )
        verdict = str(report.verdict_names[i])
        kind = report.cell_types[int(report.type_codes[i])]
        flags = str(flag_text[i])
        validity = ", ".join(f for f in flags.split(", ") if f in VALIDITY_FLAGS)
        text = " ".join((str(int(report.ids[i])), kind, verdict, flags.replace(",", ""))).lower()
        cells = [
            _number_cell(report.ids[i]),
            f"<td>{escape(kind)}</td>",
            f"<td>{escape(verdict)}</td>",
            _number_cell(report.score[i]),
            f"<td>{escape(validity) or '-'}</td>",
            f'<td class="b">{breach_html or "-"}</td>',
            *(_number_cell(report.metrics[m][i]) for m in METRIC_NAMES if m != "score"),
        ]
        html.append(
            f'<tr class="{verdict}" data-id="{int(report.ids[i])}" data-verdict="{verdict}" '
            f'data-text="{escape(text)}">' + "".join(cells) + "</tr>"
        )
    return rows, html


def histogram_range(report: Report, metric: str) -> tuple[float, float] | None:
    """(low, high) of the drawn range: the 1st to 99th percentile widened to take in the
    limits (and every negative value), so one extreme element does not squeeze the rest
    into a single bar. Values outside are counted in the caption."""
    values = np.asarray(report.metrics[metric], dtype=float)
    finite = values[np.isfinite(values)]
    if finite.size == 0:
        return None
    lo, hi = float(finite.min()), float(finite.max())
    p1, p99 = linear_percentiles(finite.copy(), [1.0, 99.0])
    limits = [v for _, _, v in metric_limits(report, metric)]
    if lo >= 0.0:  # negative values (inverted elements) are always drawn
        lo = max(lo, min([p1, *limits]))
    hi = min(hi, max([p99, *limits]))
    # one value everywhere, values apart by round-off only, values near the largest
    # float: widened or clipped so that the bins are distinct numbers
    return drawable_range(lo, hi, HIST_BINS)


def overflow(report: Report, metric: str) -> tuple[int, int, float, float]:
    """(count below the drawn range, count above it, smallest, largest value) of a
    metric's values outside :func:`histogram_range`, infinities included."""
    values = np.asarray(report.metrics[metric], dtype=float)
    values = values[~np.isnan(values)]
    lo, hi = histogram_range(report, metric) or (0.0, 0.0)
    below, above = values[values < lo], values[values > hi]
    low = float(below.min()) if below.size else lo
    high = float(above.max()) if above.size else hi
    return int(below.size), int(above.size), low, high


def bar_height(count: int, peak: int, plot_height: float) -> float:
    """Bar height on the log count scale: log(1 + count) / log(1 + peak) of the plot,
    at least :data:`MIN_BAR` for a non-empty bin, 0 for an empty one."""
    if count <= 0:
        return 0.0
    return max(plot_height * np.log1p(count) / np.log1p(max(peak, 1)), MIN_BAR)


def histogram_svg(report: Report, metric: str) -> str | None:
    """Inline SVG histogram of one metric with its warn/fail limits; None if no values.

    Counts are on a log scale (:func:`bar_height`); an overflow bar at each end holds the
    values outside the drawn range (:func:`overflow`), labelled with count and range."""
    values = np.asarray(report.metrics[metric], dtype=float)
    finite = values[np.isfinite(values)]
    drawn = histogram_range(report, metric)
    if drawn is None:
        return None
    lo, hi = drawn
    finite = finite[(finite >= lo) & (finite <= hi)]
    counts, edges = np.histogram(finite, bins=HIST_BINS, range=(lo, hi))
    n_below, n_above, low, high = overflow(report, metric)
    w, h, left, bottom, top = 340.0, 150.0, 46.0, 24.0, 14.0
    gap = 14.0  # width of each overflow bar's slot
    pw, ph = w - left - 8.0 - 2 * gap, h - bottom - top
    peak = max(int(counts.max()), n_below, n_above, 1)

    def sx(x: float) -> float:
        return left + gap + (x - lo) / (hi - lo) * pw

    parts = [
        f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {w:g} {h:g}" width="{w:g}" '
        f'height="{h:g}" role="img" aria-label="histogram of {metric}">'
    ]
    for c, a, b in zip(counts, edges[:-1], edges[1:]):
        if c:
            bh = bar_height(int(c), peak, ph)
            bw = max(sx(b) - sx(a) - 0.5, 0.5)
            parts.append(
                f'<rect x="{sx(a):.2f}" y="{top + ph - bh:.2f}" width="{bw:.2f}" '
                f'height="{bh:.2f}" fill="{BAR}"><title>{a:.4g} to {b:.4g}: {int(c)}</title></rect>'
            )
    for n, x, span, side in (
        (n_below, left, f"{_fmt(low)} to {_fmt(lo)}", "below"),
        (n_above, left + gap + pw + 1.0, f"{_fmt(hi)} to {_fmt(high)}", "above"),
    ):
        if n:
            bh = bar_height(n, peak, ph)
            parts.append(
                f'<rect x="{x:.2f}" y="{top + ph - bh:.2f}" width="{gap - 2:.2f}" '
                f'height="{bh:.2f}" fill="#222" data-overflow="{side}">'
                f"<title>{side} the range, {escape(span)}: {n}</title></rect>"
                f'<text x="{x + gap / 2 - 1:.2f}" y="{top + ph - bh - 2:.2f}" font-size="9" '
                f'text-anchor="middle">{n}</text>'
            )
    parts.append(_limit_marks(report, metric, lo, hi, sx, top, ph))
    y0 = top + ph
    parts.append(
        f'<line x1="{left}" y1="{y0}" x2="{left + pw + 2 * gap}" y2="{y0}" stroke="#222"/>'
    )
    parts.append(
        f'<text x="{left + gap}" y="{h - 6}" font-size="10">{escape(_fmt(lo))}</text>'
        f'<text x="{left + gap + pw}" y="{h - 6}" font-size="10" text-anchor="end">'
        f"{escape(_fmt(hi))}</text>"
        f'<text x="{left - 4}" y="{top + 8}" font-size="10" text-anchor="end">{peak}</text>'
        f'<text x="{left - 4}" y="{y0}" font-size="10" text-anchor="end">1</text>'
        f'<text x="{left - 4}" y="{top + ph / 2}" font-size="9" text-anchor="end">log</text>'
    )
    parts.append("</svg>")
    return "".join(parts)


def _limit_marks(report: Report, metric: str, lo: float, hi: float, sx, top, ph) -> str:
    marks = []
    for kind, value in sorted({(k, v) for _, k, v in metric_limits(report, metric)}):
        if not lo <= value <= hi:
            continue
        x = sx(value)
        dash = "4 3" if kind == "warn" else ""
        marks.append(
            f'<line x1="{x:.2f}" y1="{top}" x2="{x:.2f}" y2="{top + ph}" stroke="#222" '
            f'stroke-width="1.2" stroke-dasharray="{dash}" data-limit="{kind} {value:g}">'
            f"<title>{kind} limit {value:g}</title></line>"
        )
    return "".join(marks)


def _caption(report: Report, name: str) -> str:
    info = METRIC_INFO[name]
    values = np.asarray(report.metrics[name], dtype=float)
    unit = "" if info.unit == "1" else f" [{unit_of(name, report.dimensions)}]"
    notes = []
    inf = int(np.isinf(values).sum())
    n_below, n_above, low, high = overflow(report, name)
    lo, hi = histogram_range(report, name) or (0.0, 0.0)
    if n_below:
        notes.append(f"{n_below} below {lo:.4g} (down to {low:.4g})")
    if n_above:
        notes.append(f"{n_above} above {hi:.4g} (up to {high:.4g})")
    if inf:
        notes.append(f"{inf} of them infinite")
    extra = f" Dark end bars: {', '.join(notes)}." if notes else ""
    extra += " Counts on a log scale; one element is a visible bar."
    per_family: dict[str, list[str]] = {}
    for family, kind, v in metric_limits(report, name):
        per_family.setdefault(family, []).append(f"{kind} {v:g}")
    limits = "; ".join(f"{f} {', '.join(v)}" for f, v in per_family.items())
    legend = f" Limits (dashed warn, solid fail): {limits}." if limits else ""
    if name == "score":
        legend = (
            " Verdict bands: fail below 1/3 (solid mark), warn from 1/3 to 2/3 (dashed), ok above."
        )
    return f"<b>{name}</b>{escape(unit)}: {escape(info.meaning)}.{escape(extra)}{escape(legend)}"


def _summary(report: Report) -> str:
    s = report.summary
    counts = report.verdict_counts()
    flags = ", ".join(f"{k} {v}" for k, v in report.flag_counts().items()) or "none"
    facts = [
        ("file", s.source),
        ("nodes", f"{s.n_points:,}"),
        ("elements", ", ".join(f"{v:,} {k}" for k, v in s.element_counts.items())),
        ("not audited", s.skipped_text() or "none"),
        ("element numbers", s.element_numbers or "-"),
        ("node numbers", s.node_numbers or "-"),
        ("geometry", s.geometry_text()),
        ("profile", f"{report.profile.name} ({report.profile.origin})"),
        ("gate", f"fails on {report.fail_on}"),
        ("verdicts", f"{counts['fail']} fail, {counts['warn']} warn, {counts['ok']} ok"),
        ("flags", flags),
        *(("note", note) for note in report.notes),
    ]
    items = "".join(f"<dt>{escape(k)}</dt><dd>{escape(v)}</dd>" for k, v in facts)
    return f'<dl class="facts" id="summary">{items}</dl>'


def _regions(report: Report) -> str:
    """The summary broken down by the regions the file carries (none: nothing)."""
    breakdown = report.region_breakdown()
    if not breakdown:
        return ""
    rows = "".join(
        f'<tr><td>{escape(e["region"])}</td><td class="n">{e["elements"]}</td>'
        f'<td class="n">{e["counts"]["fail"]}</td><td class="n">{e["counts"]["warn"]}</td>'
        f'<td class="n">{e["counts"]["ok"]}</td><td class="n">{_fmt(e["worst_score"])}</td>'
        f"<td>{escape(', '.join(e['profiles']))}</td></tr>"
        for e in breakdown
    )
    return (
        '<h2>Regions</h2><table class="elements" id="regions"><thead><tr><th>region</th>'
        "<th>elements</th><th>fail</th><th>warn</th><th>ok</th><th>lowest score</th>"
        f"<th>judged under</th></tr></thead><tbody>{rows}</tbody></table>"
    )


def _findings(report: Report) -> str:
    """Mesh-level findings (when the report carries them): kind, severity, count, message."""
    findings = getattr(report, "findings", None) or []
    if not findings:
        return ""
    rows = "".join(
        f"<tr><td>{escape(str(f.kind))}</td><td>{escape(str(f.severity))}</td>"
        f'<td class="n">{int(f.count)}</td><td>{escape(str(f.message))}</td></tr>'
        for f in findings
    )
    return (
        '<h2>Mesh-level findings</h2><table class="elements" id="findings"><thead><tr>'
        "<th>kind</th><th>severity</th><th>count</th><th>message</th></tr></thead>"
        f"<tbody>{rows}</tbody></table>"
    )


def _table(report: Report) -> str:
    rows, html_rows = table_rows(report)
    n_flagged = int((report.verdict > 0).sum())
    if n_flagged == 0:
        return '<p id="no-elements">Every element is ok.</p>'
    head = "".join(
        f'<th data-type="{t}" scope="col">{escape(name)}</th>' for name, t in table_columns()
    )
    capped = (
        f'<p class="note">Listing the worst {len(rows)} of {n_flagged}; the JSON and CSV '
        "reports list every element.</p>"
        if len(rows) < n_flagged
        else ""
    )
    return (
        '<div class="controls"><label>Filter <input id="filter" type="search" '
        'placeholder="id, type or flag words, e.g. inverted quad"></label>'
        '<label>Verdict <select id="verdict-filter"><option value="all">all</option>'
        '<option value="fail">fail</option><option value="warn">warn</option></select></label>'
        f'<span>showing <b id="shown">{len(rows)}</b> of {len(rows)}; click a column '
        "heading to sort</span></div>"
        f'{capped}<div class="scroll"><table class="elements" id="elements"><thead><tr>{head}'
        f"</tr></thead><tbody>{''.join(html_rows)}</tbody></table></div>"
    )


def _histograms(report: Report) -> str:
    figs = []
    for name in METRIC_NAMES:
        svg = histogram_svg(report, name)
        if svg is not None:
            figs.append(
                f'<figure data-metric="{name}">{svg}'
                f"<figcaption>{_caption(report, name)}</figcaption></figure>"
            )
    return f'<div class="hists">{"".join(figs)}</div>'


def _plot_shows(elements: ElementMesh) -> str:
    """What the plot shows, for its alternative text."""
    if elements.has_solids:
        return "boundary see-through, flagged elements opaque and outlined"
    return "failing elements outlined"


def render(report: Report, elements: ElementMesh, color_by: str = "score") -> str:
    """The whole HTML document as a string (control characters of names escaped)."""
    name = escape(Path(report.summary.source).name)
    word = "PASS" if report.passed else "FAIL"
    png = plot_png(report, elements, color_by)
    return html_safe(
        '<!DOCTYPE html><html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>meshaudit: {name}: {word}</title><style>{_CSS}</style></head><body>"
        f'<h1><span class="verdict {word.lower()}" id="verdict">{word}</span> {name}</h1>'
        f"<p>{escape(plot.title(report))}</p>"
        f"<h2>Summary</h2>{_summary(report)}{_regions(report)}"
        f'<h2>Mesh coloured by {escape(color_by)}</h2><img class="plot" id="plot" '
        f'alt="mesh coloured by {escape(color_by)}, {_plot_shows(elements)}" '
        f'src="data:image/png;base64,{png}">'
        f"{_findings(report)}"
        f"<h2>Elements not ok</h2>{_table(report)}"
        f"<h2>Distributions</h2>{_histograms(report)}"
        f'<p class="note">meshaudit {escape(__version__)}</p>'
        f"<script>{_JS}</script></body></html>\n"
    )
