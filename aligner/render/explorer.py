"""The report's interactive part: every matched pair as JSON in the page, a searchable, sortable
table drawn from it by inline JavaScript, and a focus view of one node's neighbourhood.

Nothing is fetched: the data sits in a ``<script type="application/json">`` element, the script
and its styles are inline. The table draws at most :data:`PAGE_ROWS` matching rows at a time
("show more" adds as many), so tens of thousands of pairs stay quick to search and sort.

The focus view needs no network file: the run's own tables hold every edge among matched nodes
(conserved_edges.tsv: edges of both networks; transferred_edges.tsv: ``A->B`` rows are edges of
A whose image is not an edge of B, ``B->A`` rows the reverse). Edges to unmatched nodes are in
neither table and are not drawn; the focus view draws at most :data:`FOCUS_NEIGHBOURS`
neighbours of the chosen node.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd

__all__ = ["PAGE_ROWS", "FOCUS_NEIGHBOURS", "PAIR_COLUMNS", "MAX_PAIRS", "pair_data", "explorer_section"]

#: rows of the pair table drawn at once (and added by each "show more")
PAGE_ROWS = 200
#: neighbours of the chosen node drawn in the focus view (conserved ones first, then by confidence)
FOCUS_NEIGHBOURS = 40
#: columns of alignment.tsv shown in the pair table, in this order, when present
PAIR_COLUMNS = ("node_a", "node_b", "score", "prior", "conserved", "confidence")
#: matched pairs embedded in the page at most: a run with more embeds the least confident ones
#: (a page of a million pairs and their edges weighed over 100 MB); alignment.tsv has them all
MAX_PAIRS = 20_000


def _number(v):
    """A finite float rounded to 6 significant digits for the page, or None."""
    try:
        f = float(v)
    except (TypeError, ValueError):
        return None
    if not math.isfinite(f):
        return None
    if f == int(f) and abs(f) < 2**53:
        return int(f)
    return float(f"{f:.6g}")


def pair_data(pairs: pd.DataFrame, truth: list | None, conserved: pd.DataFrame,
              transferred: pd.DataFrame | None, degree: dict | None, *, directed: bool = False,
              max_pairs: int = MAX_PAIRS) -> dict:
    """The JSON object embedded in the page.

    ``rows`` follow ``pairs`` (alignment.tsv's order); ``columns`` name their fields, ending with
    ``true`` when ``truth`` (one of True / False / None per row) is given. ``edges`` hold row
    indices, flattened (i1, j1, i2, j2, ...): ``conserved`` from conserved_edges.tsv, ``a_only``
    and ``b_only`` from the ``A->B`` and ``B->A`` rows of transferred_edges.tsv (None when that
    file is missing), among the rows embedded. ``degree_a``: each row's node degree in A, when
    known. With more than ``max_pairs`` pairs, the ``max_pairs`` least confident are embedded
    (lowest ``confidence``, ties and runs without the column by row order), still in row order;
    ``total`` counts all of them.
    """
    total = len(pairs)
    if total > max_pairs:
        rank = (np.argsort(pairs["confidence"].to_numpy(dtype=np.float64), kind="stable")
                if "confidence" in pairs else np.arange(total))
        picked = np.sort(rank[:max_pairs])
        pairs = pairs.iloc[picked].reset_index(drop=True)
        truth = None if truth is None else [truth[i] for i in picked.tolist()]
    cols = [c for c in PAIR_COLUMNS if c in pairs]
    text = {"node_a", "node_b"}
    data = {c: (pairs[c].astype(str).tolist() if c in text else [_number(v) for v in pairs[c]]) for c in cols}
    if truth is not None:
        cols = cols + ["true"]
        data["true"] = list(truth)
    rows = [list(r) for r in zip(*(data[c] for c in cols))]
    row_of_a = {a: i for i, a in enumerate(pairs["node_a"].astype(str))}

    def flat(a1, a2) -> list[int]:
        a1, a2 = pd.Series(a1, dtype=object), pd.Series(a2, dtype=object)
        if len(pairs) < total:  # the edges among the embedded rows only
            shown = a1.isin(row_of_a.keys()) & a2.isin(row_of_a.keys())
            a1, a2 = a1[shown], a2[shown]
        i, j = a1.map(row_of_a), a2.map(row_of_a)
        ok = i.notna() & j.notna()
        return np.column_stack([i[ok].astype(int), j[ok].astype(int)]).ravel().tolist()

    edges = {"conserved": flat(conserved["node_a1"].astype(str), conserved["node_a2"].astype(str)),
             "a_only": None, "b_only": None}
    if transferred is not None:
        for key, d in (("a_only", "A->B"), ("b_only", "B->A")):
            t = transferred[transferred["direction"] == d]
            edges[key] = flat(t["node_a1"].astype(str), t["node_a2"].astype(str))
    deg = None if degree is None else [_number(degree.get(a)) for a in pairs["node_a"].astype(str)]
    return {"columns": cols, "rows": rows, "edges": edges, "degree_a": deg, "directed": bool(directed),
            "page_rows": PAGE_ROWS, "focus_limit": FOCUS_NEIGHBOURS, "total": total}


def _json_for_script(obj) -> str:
    """JSON safe inside a <script> element: every '<' escaped (no '</script>' can close it early)."""
    return json.dumps(obj, separators=(",", ":"), allow_nan=False).replace("<", "\\u003c")


CSS = """
.explorer .tools{display:flex;gap:12px;align-items:center;flex-wrap:wrap;margin:6px 0}
.explorer input[type=search]{font-size:1em;padding:4px 8px;min-width:260px;border:1px solid #b9b3a6;border-radius:4px}
#pair-table th{cursor:pointer;user-select:none;white-space:nowrap}
#pair-table th[aria-sort=ascending]::after{content:" \\25B2";font-size:.75em}
#pair-table th[aria-sort=descending]::after{content:" \\25BC";font-size:.75em}
#pair-table tbody tr{cursor:pointer}
#pair-table tbody tr:hover{background:#f3efe4}
#pair-table tbody tr.sel{background:#fbe3d6}
.scroll{max-height:520px;overflow:auto;border:1px solid #ece9e2}
.t-true{color:#2d6a2e;font-weight:600}.t-false{color:#a8321b;font-weight:600}
#focus[hidden]{display:none}
#focus .panels{display:flex;flex-wrap:wrap;gap:14px}
#focus figure{margin:0;flex:1 1 440px}
#focus svg{width:100%;height:auto;background:#fbfaf7;border:1px solid #ece9e2;border-radius:4px}
#focus svg text{font-size:10px;fill:#1d232b;pointer-events:none;paint-order:stroke;stroke:#fbfaf7;stroke-width:3px}
#focus svg circle{fill:#1f5f8b;stroke:#fff;stroke-width:1.5;cursor:pointer}
#focus svg circle.centre{fill:#d0542c}
#focus svg circle.wrong{stroke:#a8321b;stroke-width:3}
line.e-cons{stroke:#2d6a2e;stroke-width:2.2}
line.e-here{stroke:#8c96a3;stroke-width:1.3}
line.e-missing{stroke:#c0392b;stroke-width:1.6;stroke-dasharray:5 4}
.legend span{display:inline-block;margin-right:16px;font-size:.82em}
#focus .legend svg{vertical-align:middle;width:34px;height:10px;border:0;background:none}
"""

_JS = r"""
(function () {
  var D = JSON.parse(document.getElementById('pair-data').textContent);
  var cols = D.columns, rows = D.rows, n = rows.length;
  var ci = {}; cols.forEach(function (c, k) { ci[c] = k; });
  var keyA = new Array(n), keyB = new Array(n);
  for (var i = 0; i < n; i++) { keyA[i] = rows[i][0].toLowerCase(); keyB[i] = rows[i][1].toLowerCase(); }
  var order = []; for (i = 0; i < n; i++) order.push(i);
  var shown = D.page_rows, query = '', selected = -1;
  var box = document.getElementById('pair-search'), body = document.querySelector('#pair-table tbody');
  var count = document.getElementById('pair-count'), more = document.getElementById('pair-more');
  var heads = document.querySelectorAll('#pair-table thead th');

  function esc(s) {
    return String(s).replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
  }
  function num(v) {
    if (v === null || v === undefined) return '\u2014';
    if (Number.isInteger(v)) return v.toLocaleString('en');
    var a = Math.abs(v);
    return (a !== 0 && (a < 1e-3 || a >= 1e6)) ? v.toPrecision(3) : String(Math.round(v * 1e4) / 1e4);
  }
  function cell(c, v) {
    if (c === 'true') {
      if (v === null) return '<td>\u2014</td>';
      return v ? '<td class="t-true">true</td>' : '<td class="t-false">false</td>';
    }
    if (c === 'node_a' || c === 'node_b') return '<td>' + esc(v) + '</td>';
    return '<td class="n">' + num(v) + '</td>';
  }
  function draw() {
    var q = query, out = [], total = 0;
    for (var k = 0; k < n; k++) {
      var r = order[k];
      if (q && keyA[r].indexOf(q) < 0 && keyB[r].indexOf(q) < 0) continue;
      total++;
      if (out.length < shown) {
        var h = '<tr data-row="' + r + '"' + (r === selected ? ' class="sel"' : '') + '>';
        for (var c = 0; c < cols.length; c++) h += cell(cols[c], rows[r][c]);
        out.push(h + '</tr>');
      }
    }
    body.innerHTML = out.join('');
    count.textContent = (q ? total.toLocaleString('en') + ' of ' : '') + n.toLocaleString('en') + ' pairs' +
      (q ? ' match' : '') + (total > out.length ? '; showing the first ' + out.length.toLocaleString('en') : '');
    more.hidden = total <= out.length;
  }
  function sortBy(k) {
    var th = heads[k], name = cols[k], text = name === 'node_a' || name === 'node_b';
    var was = th.getAttribute('aria-sort');
    var dir = was ? (was === 'ascending' ? -1 : 1) : (text ? 1 : -1);
    for (var h = 0; h < heads.length; h++) heads[h].removeAttribute('aria-sort');
    th.setAttribute('aria-sort', dir === 1 ? 'ascending' : 'descending');
    order.sort(function (x, y) {
      var a = rows[x][k], b = rows[y][k];
      if (a === b) return x - y;
      if (a === null) return 1;
      if (b === null) return -1;
      return (a < b ? -1 : 1) * dir;
    });
    draw();
  }
  box.addEventListener('input', function () { query = box.value.trim().toLowerCase(); shown = D.page_rows; draw(); });
  more.addEventListener('click', function () { shown += D.page_rows; draw(); });
  for (var h = 0; h < heads.length; h++) {
    (function (k) { heads[k].addEventListener('click', function () { sortBy(k); }); })(h);
  }
  body.addEventListener('click', function (e) {
    var tr = e.target.closest('tr');
    if (tr) focusOn(+tr.getAttribute('data-row'));
  });

  // ---- focus view: the chosen pair, its matched neighbours in A and their images in B
  var adj = null, KIND = ['conserved', 'a_only', 'b_only'];
  function adjacency() {
    adj = new Array(n);
    for (var r = 0; r < n; r++) adj[r] = [];
    KIND.forEach(function (name, kind) {
      var e = D.edges[name] || [];
      for (var k = 0; k + 1 < e.length; k += 2) { adj[e[k]].push([e[k + 1], kind]); adj[e[k + 1]].push([e[k], kind]); }
    });
  }
  var SVGNS = 'http://www.w3.org/2000/svg';
  function el(tag, attrs, parent) {
    var x = document.createElementNS(SVGNS, tag);
    for (var a in attrs) x.setAttribute(a, attrs[a]);
    parent.appendChild(x);
    return x;
  }
  // the class of an edge of kind k in the panel of network A (side 0) or B (side 1)
  function edgeClass(kind, side) {
    if (kind === 0) return 'e-cons';
    return (kind === 1) === (side === 0) ? 'e-here' : 'e-missing';
  }
  function panel(svg, side, nodes, pos, lines) {
    while (svg.firstChild) svg.removeChild(svg.firstChild);
    lines.forEach(function (l) {
      el('line', {x1: pos[l[0]][0], y1: pos[l[0]][1], x2: pos[l[1]][0], y2: pos[l[1]][1],
                  'class': edgeClass(l[2], side), 'data-u': l[0], 'data-v': l[1]}, svg);
    });
    nodes.forEach(function (r, k) {
      var cls = k === 0 ? 'centre' : '';
      if (side === 1 && ci['true'] !== undefined && rows[r][ci['true']] === false) cls += ' wrong';
      var c = el('circle', {cx: pos[r][0], cy: pos[r][1], r: k === 0 ? 9 : 6, 'class': cls.trim(), 'data-row': r}, svg);
      el('title', {}, c).textContent = rows[r][0] + ' \u2192 ' + rows[r][1];
      c.addEventListener('click', function () { focusOn(r); });
      var t = el('text', {x: pos[r][0] + (k === 0 ? 12 : 8), y: pos[r][1] - 6}, svg);
      t.textContent = rows[r][side];
    });
  }
  function focusOn(r) {
    if (adj === null) adjacency();
    selected = r;
    var seen = {}, nb = [];
    adj[r].forEach(function (p) {
      if (p[0] === r) return;
      var best = seen[p[0]];
      if (best === undefined) { seen[p[0]] = nb.length; nb.push([p[0], p[1]]); }
      else if (p[1] < nb[best][1]) nb[best][1] = p[1];
    });
    var conf = ci.confidence !== undefined ? ci.confidence : ci.score;
    nb.sort(function (x, y) {
      return (x[1] === 0 ? 0 : 1) - (y[1] === 0 ? 0 : 1) || (rows[y[0]][conf] || 0) - (rows[x[0]][conf] || 0) ||
        x[0] - y[0];
    });
    var hidden = Math.max(0, nb.length - D.focus_limit);
    nb = nb.slice(0, D.focus_limit);
    var nodes = [r].concat(nb.map(function (p) { return p[0]; }));
    var W = 460, H = 380, R = Math.min(W, H) / 2 - 44, pos = {};
    pos[r] = [W / 2 - 30, H / 2];
    nb.forEach(function (p, k) {
      var t = 2 * Math.PI * k / Math.max(nb.length, 1) - Math.PI / 2;
      pos[p[0]] = [W / 2 - 30 + R * Math.cos(t), H / 2 + R * Math.sin(t)];
    });
    var lines = [], key = {};
    nodes.forEach(function (u) {
      adj[u].forEach(function (p) {
        var v = p[0];
        if (pos[v] === undefined || v === u) return;
        var id = Math.min(u, v) + ',' + Math.max(u, v) + ',' + p[1];
        if (key[id]) return;
        key[id] = 1;
        lines.push([u, v, p[1]]);
      });
    });
    var counts = [0, 0, 0];
    adj[r].forEach(function (p) { counts[p[1]]++; });
    var view = document.getElementById('focus');
    view.hidden = false;
    view.scrollIntoView({block: 'nearest'});
    panel(document.getElementById('focus-a'), 0, nodes, pos, lines);
    panel(document.getElementById('focus-b'), 1, nodes, pos, lines);
    var row = rows[r], parts = [];
    document.getElementById('focus-title').textContent = row[0] + ' \u2192 ' + row[1];
    cols.forEach(function (c, k) {
      if (k < 2) return;
      parts.push(c === 'true' ? (row[k] === null ? 'not in the truth table' : (row[k] ? 'a true pair' : 'not a true pair'))
                              : c + ' ' + num(row[k]));
    });
    var txt = parts.join(' \u00b7 ') + '. Edges at this pair among matched nodes: ' + counts[0] + ' conserved';
    if (D.edges.a_only !== null) txt += ', ' + counts[1] + ' of A missing in B, ' + counts[2] + ' of B missing in A';
    txt += '.';
    if (D.degree_a && D.degree_a[r] !== null && !D.directed) {
      var unmatched = D.degree_a[r] - counts[0] - counts[1];
      if (D.edges.a_only !== null && unmatched > 0) txt += ' ' + unmatched + ' more neighbour(s) in A are unmatched (not drawn).';
    }
    if (hidden) txt += ' Drawn: the first ' + D.focus_limit + ' of ' + (D.focus_limit + hidden) + ' neighbours.';
    document.getElementById('focus-text').textContent = txt;
    var trs = body.querySelectorAll('tr');
    for (var k = 0; k < trs.length; k++) trs[k].classList.toggle('sel', +trs[k].getAttribute('data-row') === r);
  }
  draw();
  window.alignerFocus = focusOn;
})();
"""


def explorer_section(data: dict, truth_note: str) -> str:
    """The section holding the pair table and the focus view, with ``data`` (see :func:`pair_data`)."""
    import html

    titles = {"node_a": "node in A", "node_b": "its partner in B", "score": "diffusion score",
              "prior": "prior similarity", "conserved": "conserved edges at the pair",
              "confidence": "L / (1 + L), L what the matching loses at the pair's best exchange",
              "true": "the pair is in the truth table"}
    head = "".join(f"<th title='{html.escape(titles.get(c, c))}'>{html.escape(c)}</th>" for c in data["columns"])
    missing = ("" if data["edges"]["a_only"] is not None else
               " This run has no transferred_edges.tsv, so only conserved edges are drawn.")
    shown, total = len(data["rows"]), data.get("total", len(data["rows"]))
    title, part = "All matched pairs", ""
    if shown < total:
        order = "least confident" if "confidence" in data["columns"] else "first"
        title = f"The {shown:,} {order} of {total:,} matched pairs"
        part = (f"This run has {total:,} matched pairs; the page holds the {shown:,} {order} of them (and the edges "
                "among them), so that it stays light to open. alignment.tsv lists them all. ")
    return (
        f"<section class='explorer' id='pairs'><h2>{title}</h2>"
        f"<p class='note'>{part}Type part of a node name (of A or of B) to filter; click a column header to sort "
        f"(again to reverse); click a row to see its neighbourhood below. {html.escape(truth_note)}</p>"
        "<div class='tools'><input type='search' id='pair-search' placeholder='search node names' "
        "aria-label='search node names' autocomplete='off'><span class='note' id='pair-count'></span></div>"
        f"<div class='scroll'><table id='pair-table'><thead><tr>{head}</tr></thead><tbody></tbody></table></div>"
        "<p><button type='button' id='pair-more' hidden>show more</button></p>"
        "<div id='focus' hidden><h3 id='focus-title'></h3><p class='note' id='focus-text'></p>"
        "<div class='panels'><figure><svg id='focus-a' viewBox='0 0 460 380' role='img' "
        "aria-label='neighbourhood in network A'></svg><figcaption>In network A</figcaption></figure>"
        "<figure><svg id='focus-b' viewBox='0 0 460 380' role='img' aria-label='image in network B'></svg>"
        "<figcaption>The images in network B (a red ring: not the true partner)</figcaption></figure></div>"
        "<p class='legend'>"
        "<span><svg viewBox='0 0 34 10'><line class='e-cons' x1='0' y1='5' x2='34' y2='5'/></svg> conserved "
        "(an edge in both networks)</span>"
        "<span><svg viewBox='0 0 34 10'><line class='e-here' x1='0' y1='5' x2='34' y2='5'/></svg> an edge of this "
        "network only</span>"
        "<span><svg viewBox='0 0 34 10'><line class='e-missing' x1='0' y1='5' x2='34' y2='5'/></svg> missing here "
        "(an edge of the other network)</span></p>"
        f"<p class='note'>The chosen node (orange) and at most {data['focus_limit']} of its matched neighbours "
        "(conserved ones first, then by confidence); the same places in both panels, so a pair sits at one spot "
        "in each. Edges to unmatched nodes are not drawn (the run's tables do not hold them); click a node to move "
        f"the focus.{html.escape(missing)}</p></div>"
        f"<script type='application/json' id='pair-data'>{_json_for_script(data)}</script>"
        f"<script>{_JS}</script></section>")
