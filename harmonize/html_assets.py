"""Styles and scripts of the HTML report, kept apart from the page builder.

The page carries a Content-Security-Policy that allows only these two inline scripts (by
their SHA-256), so markup that slipped through escaping still could not run a script or
fetch anything.
"""

from __future__ import annotations

import base64
import hashlib

# Outcome colours (Okabe-Ito palette: told apart by the common colour-vision deficiencies).
OUTCOME_COLOURS = {"converted": "#009E73", "missing": "#B8BEC8", "unresolved": "#D55E00",
                   "passed": "#56B4E9"}
OUTCOME_LABELS = {"converted": "converted", "missing": "missing", "unresolved": "undecided",
                  "passed": "passed through"}

STYLE = """
:root{--ink:#1c2230;--muted:#5b6476;--line:#dfe3ea;--soft:#f4f6f9;--warn:#8a4b00;
--bad:#a4262c;--good:#0b6e4f}
*{box-sizing:border-box}
body{font:14px/1.5 system-ui,-apple-system,"Segoe UI",sans-serif;color:var(--ink);margin:0;
background:#fff}
main{max-width:76rem;margin:0 auto;padding:1.2rem 1.6rem 4rem}
header.page{background:#1f2a44;color:#fff;padding:1.1rem 1.6rem}
header.page h1{margin:0;font-size:1.45rem;max-width:76rem;margin:0 auto}
header.page p{margin:.25rem auto 0;max-width:76rem;color:#cdd5e6}
nav.toc{position:sticky;top:0;z-index:2;background:#fff;border-bottom:1px solid var(--line);
padding:.4rem 1.6rem;font-size:.9rem}
nav.toc a{margin-right:1rem;color:#2a4c8f;text-decoration:none}
nav.toc a:hover{text-decoration:underline}
h2{font-size:1.25rem;margin:2.2rem 0 .6rem;padding-bottom:.2rem;border-bottom:2px solid var(--line)}
h3{font-size:1.05rem;margin:0}
h4{font-size:.92rem;margin:1rem 0 .3rem;color:var(--muted);text-transform:uppercase;
letter-spacing:.03em}
a{color:#2a4c8f}
.caution{background:#fff4d6;border:2px solid #d99a00;border-left-width:8px;padding:.8rem 1.1rem;
margin:1rem 0;font-size:1.02rem}
.caution strong{color:var(--warn)}
.problem{background:#fdecec;border:2px solid #c9454b;border-left-width:8px;padding:.6rem 1rem;
margin:1rem 0}
.reading-note{background:#f1f4f8;border-left:6px solid #6b7a90;padding:.5rem 1rem;margin:.6rem 0}
.drift-box{background:#fff0e6;border-left:6px solid #D55E00;padding:.6rem 1rem;margin:.6rem 0}
.ok{color:var(--good)}
.cards{display:flex;flex-wrap:wrap;gap:.6rem;margin:.6rem 0}
.card{border:1px solid var(--line);border-radius:6px;padding:.45rem .8rem;min-width:8rem}
.card b{display:block;font-size:1.3rem;font-variant-numeric:tabular-nums}
.card span{color:var(--muted);font-size:.85rem}
.card i{display:inline-block;width:.7rem;height:.7rem;border-radius:2px;margin-right:.3rem}
.figures{display:flex;flex-wrap:wrap;gap:1.2rem;align-items:flex-start}
.figures figure{margin:0;max-width:100%}
.figures svg{max-width:100%;height:auto}
figcaption{color:var(--muted);font-size:.85rem;max-width:36rem}
table{border-collapse:collapse;margin:.4rem 0 .8rem}
td,th{padding:.22rem .55rem;border-bottom:1px solid var(--line);text-align:left;
vertical-align:top}
th{background:var(--soft);font-weight:600;white-space:nowrap}
th[data-sortable]{cursor:pointer;user-select:none}
th[data-sortable]::after{content:" \\2195";color:#9aa3b2;font-size:.8em}
th[aria-sort=ascending]::after{content:" \\25B2";color:var(--ink)}
th[aria-sort=descending]::after{content:" \\25BC";color:var(--ink)}
.num{text-align:right;font-variant-numeric:tabular-nums}
.wide{width:100%}
code,.raw{font-family:ui-monospace,"SFMono-Regular",Menlo,Consolas,monospace;font-size:.88em}
.raw{white-space:pre-wrap;background:#eef1f6;border-radius:3px;padding:0 .15rem;
overflow-wrap:break-word}
.grid>div{min-width:0;overflow-x:auto}
.none{color:var(--muted);font-style:italic}
.kind{display:inline-block;border-radius:3px;padding:0 .4rem;font-size:.8rem;
background:#e6ebf5;color:#23345e;font-weight:600}
.conf{font-variant-numeric:tabular-nums;font-weight:600}
.conf.low{color:var(--bad)}.conf.mid{color:var(--warn)}.conf.high{color:var(--good)}
.flag{display:inline-block;font-size:.78rem;padding:0 .35rem;border-radius:3px;
background:#fff4d6;color:var(--warn);border:1px solid #e5b94a;margin-left:.3rem}
.flag.bad{background:#fdecec;color:var(--bad);border-color:#e09a9e}
article.col{border:1px solid var(--line);border-radius:8px;padding:.8rem 1rem;margin:.9rem 0}
article.col>header{display:flex;flex-wrap:wrap;align-items:baseline;gap:.5rem}
article.col .decision{margin:.35rem 0 0;font-size:.95rem}
.grid{display:grid;grid-template-columns:minmax(0,1.35fr) minmax(0,1fr);gap:1.2rem}
@media (max-width:900px){.grid{grid-template-columns:1fr}}
ol.why{margin:.2rem 0;padding-left:1.3rem}
ol.why li{margin:.15rem 0}
ul.drift{color:var(--bad);margin:.3rem 0}
.legend span{margin-right:.8rem;white-space:nowrap;font-size:.85rem}
.legend i{display:inline-block;width:.7rem;height:.7rem;border-radius:2px;margin-right:.25rem;
vertical-align:-1px}
.cand{display:inline-block;background:#eef1f6;border:1px solid var(--line);border-radius:3px;
padding:0 .3rem;margin:0 .2rem .15rem 0;font-family:ui-monospace,Menlo,Consolas,monospace;
font-size:.85em;white-space:pre-wrap}
.controls{display:flex;flex-wrap:wrap;gap:.6rem;align-items:center;margin:.4rem 0}
.controls input,.controls select{font:inherit;padding:.2rem .4rem;border:1px solid #b9c0cc;
border-radius:4px}
.controls input{min-width:18rem}
.shown{color:var(--muted)}
.scroll{max-height:42rem;overflow:auto;border:1px solid var(--line)}
.scroll table{margin:0}
.scroll th{position:sticky;top:0}
details>summary{cursor:pointer;color:#2a4c8f}
table.kv td:first-child{color:var(--muted);white-space:nowrap}
#script-errors{background:#fdecec;border:2px solid #c9454b;padding:.5rem 1rem 0 2rem}
.muted{color:var(--muted)}
"""

# Runs first: any later failure of the page's script lands in #script-errors, visibly.
GUARD_SCRIPT = """
(function(){
  var sink = document.getElementById('script-errors');
  function record(text){
    if (!sink) { return; }
    var item = document.createElement('li');
    item.textContent = String(text);
    sink.appendChild(item);
    sink.hidden = false;
  }
  window.harmonizeRecordError = record;
  window.addEventListener('error', function(event){
    record((event.message || 'script error') + ' (line ' + (event.lineno || '?') + ')');
  });
  window.addEventListener('unhandledrejection', function(event){
    record('unhandled rejection: ' + event.reason);
  });
  document.addEventListener('securitypolicyviolation', function(event){
    record('blocked by the page policy: ' + event.violatedDirective);
  });
})();
"""

# Sorting and filtering for tables marked data-table; the undecided table also reads
# ?q=, ?column=, ?sort= and ?desc= from the address so a filtered view can be linked.
TABLE_SCRIPT = """
(function(){
  'use strict';
  function keyOf(cell, numeric){
    var raw = cell.getAttribute('data-sort');
    if (raw === null) { raw = cell.textContent; }
    if (numeric) { var n = parseFloat(raw); return isNaN(n) ? -Infinity : n; }
    return raw.toLowerCase();
  }
  function setup(table){
    var body = table.tBodies[0];
    var heads = table.tHead ? table.tHead.rows[0].cells : [];
    var rows = Array.prototype.slice.call(body.rows);
    var texts = rows.map(function(row){ return row.textContent.toLowerCase(); });
    var controls = document.querySelector('.controls[data-for="' + table.id + '"]');
    var input = controls ? controls.querySelector('input') : null;
    var select = controls ? controls.querySelector('select') : null;
    var shown = controls ? controls.querySelector('.shown') : null;
    function sortBy(index, descending){
      var numeric = heads[index].getAttribute('data-type') === 'num';
      var keyed = rows.map(function(row, i){ return [keyOf(row.cells[index], numeric), i]; });
      keyed.sort(function(a, b){
        if (a[0] < b[0]) { return descending ? 1 : -1; }
        if (a[0] > b[0]) { return descending ? -1 : 1; }
        return a[1] - b[1];
      });
      var fragment = document.createDocumentFragment();
      keyed.forEach(function(pair){ fragment.appendChild(rows[pair[1]]); });
      body.appendChild(fragment);
      for (var h = 0; h < heads.length; h++) { heads[h].removeAttribute('aria-sort'); }
      heads[index].setAttribute('aria-sort', descending ? 'descending' : 'ascending');
    }
    function applyFilter(){
      var words = input ? input.value.toLowerCase().trim().split(/\\s+/).filter(Boolean) : [];
      var column = select ? select.value : '';
      var count = 0;
      rows.forEach(function(row, i){
        var keep = (!column || row.getAttribute('data-col') === column) &&
          words.every(function(word){ return texts[i].indexOf(word) !== -1; });
        row.hidden = !keep;
        if (keep) { count++; }
      });
      if (shown) { shown.textContent = count + ' of ' + rows.length + ' rows shown'; }
    }
    Array.prototype.forEach.call(heads, function(head, index){
      if (!head.hasAttribute('data-sortable')) { return; }
      head.tabIndex = 0;
      function toggle(){ sortBy(index, head.getAttribute('aria-sort') === 'ascending'); }
      head.addEventListener('click', toggle);
      head.addEventListener('keydown', function(event){
        if (event.key === 'Enter' || event.key === ' ') { event.preventDefault(); toggle(); }
      });
    });
    if (input) { input.addEventListener('input', applyFilter); }
    if (select) { select.addEventListener('change', applyFilter); }
    table.harmonize = {sortBy: sortBy, applyFilter: applyFilter, input: input, select: select,
                       heads: heads};
    applyFilter();
  }
  function fromAddress(){
    var table = document.getElementById('undecided-table');
    if (!table || !table.harmonize) { return; }
    var params = new URLSearchParams(window.location.search);
    var api = table.harmonize;
    if (params.has('q') && api.input) { api.input.value = params.get('q'); }
    if (params.has('column') && api.select) { api.select.value = params.get('column'); }
    if (params.has('sort')) {
      for (var i = 0; i < api.heads.length; i++) {
        if (api.heads[i].getAttribute('data-key') === params.get('sort')) {
          api.sortBy(i, params.get('desc') === '1');
        }
      }
    }
    api.applyFilter();
  }
  function showColumn(event){
    var table = document.getElementById('undecided-table');
    if (!table || !table.harmonize || !table.harmonize.select) { return; }
    var wanted = event.currentTarget.getAttribute('data-show-column');
    var select = table.harmonize.select;
    var known = Array.prototype.some.call(select.options, function(option){
      return option.value === wanted; });
    select.value = known ? wanted : '';
    if (table.harmonize.input) { table.harmonize.input.value = ''; }
    table.harmonize.applyFilter();
  }
  try {
    Array.prototype.forEach.call(document.querySelectorAll('table[data-table]'), setup);
    fromAddress();
    Array.prototype.forEach.call(document.querySelectorAll('a[data-show-column]'),
      function(link){ link.addEventListener('click', showColumn); });
    document.body.setAttribute('data-script', 'ready');
  } catch (error) {
    if (window.harmonizeRecordError) { window.harmonizeRecordError(error && error.stack || error); }
  }
})();
"""


def _csp_hash(script: str) -> str:
    digest = hashlib.sha256(script.encode("utf-8")).digest()
    return "'sha256-" + base64.b64encode(digest).decode("ascii") + "'"


# No network at all: no external script, style, image, font or connection is allowed.
CONTENT_SECURITY_POLICY = (
    "default-src 'none'; style-src 'unsafe-inline'; img-src data:; "
    f"script-src {_csp_hash(GUARD_SCRIPT)} {_csp_hash(TABLE_SCRIPT)}; base-uri 'none'; "
    "form-action 'none'")
