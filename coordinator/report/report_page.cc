#include "coordinator/report/report_page.h"

#include "coordinator/report/report_charts.h"
#include "coordinator/report/svg_chart.h"

namespace fanfold {
namespace {

// Okabe & Ito (2002), "Color Universal Design": distinguishable with every
// common colour-vision deficiency. Text is #1d2330 on white (contrast > 15:1),
// secondary text #4a5261 (> 8:1).
const char kCss[] = R"CSS(
:root{--ink:#1d2330;--muted:#4a5261;--line:#dde1e7;--blue:#0072B2;--sky:#56B4E9;--green:#009E73;
--orange:#E69F00;--vermillion:#D55E00;--purple:#CC79A7;--bg:#ffffff;--panel:#f7f8fa;
--font:system-ui,-apple-system,"Segoe UI",Roboto,"DejaVu Sans","Helvetica Neue",Arial,sans-serif}
*{box-sizing:border-box}
body{margin:0;background:var(--bg);color:var(--ink);font:15px/1.45 var(--font)}
main{max-width:1180px;margin:0 auto;padding:28px 24px 48px}
header h1{font-size:26px;margin:0 0 4px}
header .meta{color:var(--muted);font-size:13px;margin:2px 0;word-break:break-all}
h2{font-size:18px;margin:0 0 4px}
section{border:1px solid var(--line);border-radius:10px;padding:18px 20px;margin:18px 0;background:#fff}
section>p.lead{color:var(--muted);margin:0 0 12px;font-size:13.5px}
.pill{display:inline-block;border-radius:999px;padding:3px 12px;font-size:14px;font-weight:600;border:1px solid;margin:8px 0 4px}
.pill.ok{background:#e3f3ec;color:#00573d;border-color:var(--green)}
.pill.bad{background:#fbe6da;color:#8a3300;border-color:var(--vermillion)}
.pill.warn{background:#fdf2d3;color:#5c4100;border-color:var(--orange)}
.cards{display:grid;grid-template-columns:repeat(auto-fill,minmax(168px,1fr));gap:10px}
.card{border:1px solid var(--line);border-radius:8px;padding:10px 12px;background:var(--panel)}
.card .label{font-size:11.5px;color:var(--muted);text-transform:uppercase;letter-spacing:.05em}
.card .num{font-size:22px;font-weight:650;font-variant-numeric:tabular-nums}
.card .sub{font-size:12.5px;color:var(--muted)}
.card .sub .num{font-size:inherit;font-weight:600;color:var(--ink)}
.card.alert{border-color:var(--vermillion);background:#fdf1ea}
svg.chart{width:100%;height:auto;display:block;margin-top:6px}
svg.defs{position:absolute}
svg text{font-family:var(--font);font-size:12px;fill:var(--ink)}
.axis text{fill:var(--muted)}
.axis .caption{fill:var(--muted);font-size:12px}
.grid{stroke:#e6e9ee;stroke-width:1}
.tick,.baseline{stroke:#8a919e;stroke-width:1}
.lane{fill:#f6f7f9}.lane.odd{fill:#eceff3}
.lane-label{fill:var(--muted)}
.bar.done{fill:var(--blue)}
.bar.retried{fill:url(#ff-hatch-retried);stroke:#9a6700;stroke-width:1.5;stroke-dasharray:3 2}
.bar:not(.done):not(.retried){fill:url(#ff-hatch-failed);stroke:var(--vermillion);stroke-width:1.5}
.attempt:hover .bar{stroke:#000;stroke-width:2}
.hatch-bg-failed{fill:#fbe0cc}.hatch-line-failed{stroke:var(--vermillion);stroke-width:2.5}
.hatch-bg-retried{fill:#fdf0cf}.hatch-line-retried{stroke:var(--orange);stroke-width:1.4}
.bar-label{fill:#fff;font-size:11px;pointer-events:none}
.bar-mark{font-size:13px;font-weight:700;pointer-events:none}
.area{fill:rgba(0,114,178,.16)}.series{fill:none;stroke:var(--blue);stroke-width:2}
.hover{fill:transparent}.hover:hover{fill:rgba(0,0,0,.06)}
.bad{fill:var(--vermillion)}.bad:hover{fill:#8a3300}
.hist{fill:var(--sky)}.hist.straggler{fill:var(--vermillion)}
.marker{stroke-width:1.5}.marker.median{stroke:var(--ink);stroke-dasharray:5 3}
.marker.threshold{stroke:var(--vermillion);stroke-dasharray:2 3}
.marker-label{font-size:12px}
.ideal{stroke:#8a919e;stroke-width:1.5;stroke-dasharray:6 4}
.bound{fill:none;stroke:var(--orange);stroke-width:2.5;stroke-dasharray:1 4;stroke-linecap:round}
.measured{fill:none;stroke:var(--blue);stroke-width:2.5}
.point{fill:var(--blue);stroke:#fff;stroke-width:2}
.point-label{font-weight:600}
.series-label{font-size:12.5px}.ideal-label{fill:var(--muted)}.bound-label{fill:#8a5a00}.measured-label{fill:var(--blue)}
.legend{display:flex;flex-wrap:wrap;gap:6px 18px;font-size:13px;color:var(--muted);margin:4px 0 0;padding:0;list-style:none}
.legend li{display:flex;align-items:center;gap:6px}
.sw{display:inline-block;width:22px;height:12px;border-radius:2px;vertical-align:middle}
.sw.done{background:var(--blue)}
.sw.failed{background:repeating-linear-gradient(45deg,var(--vermillion) 0 2px,#fbe0cc 2px 5px);border:1px solid var(--vermillion)}
.sw.retried{background:#fdf0cf;border:1.5px dashed #9a6700}
.sw.line{height:0;border-top:2.5px solid var(--blue);border-radius:0}
.sw.line.ideal{border-top:2px dashed #8a919e}.sw.line.bound{border-top:3px dotted var(--orange)}
.sw.sky{background:var(--sky)}.sw.verm{background:var(--vermillion)}
.two{display:grid;grid-template-columns:minmax(0,1.3fr) minmax(0,1fr);gap:20px;align-items:start}
@media (max-width:900px){.two{grid-template-columns:1fr}}
.narrow{max-width:760px;margin-bottom:14px}
table{border-collapse:collapse;width:100%;font-size:13px}
th,td{padding:5px 8px;border-bottom:1px solid var(--line);text-align:left;vertical-align:top}
th{border-bottom:2px solid #c6ccd5;font-weight:600;white-space:nowrap}
td.n,th.n{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}
table.sortable th{cursor:pointer}
table.sortable th[aria-sort=ascending]::after{content:" \25B2";font-size:10px}
table.sortable th[aria-sort=descending]::after{content:" \25BC";font-size:10px}
tr.flag td{background:#fdf1ea}
code,.mono{font-family:"DejaVu Sans Mono",Menlo,Consolas,monospace;font-size:12.5px}
.phases{display:flex;height:30px;border-radius:6px;overflow:hidden;margin:6px 0 8px}
.phases div{display:flex;align-items:center;justify-content:center;color:#fff;font-size:12.5px;font-weight:600;white-space:nowrap;overflow:hidden}
.ph-read{background:var(--sky);color:#0d2233 !important}.ph-parse{background:var(--blue)}
.ph-aggregate{background:var(--green)}.ph-encode{background:var(--purple);color:#2a0f20 !important}
.hbar{display:inline-block;height:12px;background:var(--vermillion);vertical-align:middle;margin-right:8px;border-radius:2px}
details summary{cursor:pointer;font-weight:600;margin:4px 0}
.note{color:var(--muted);font-size:13px}
.warn-list{color:#5c4100;font-size:13px}
footer{color:var(--muted);font-size:12.5px;margin-top:24px}
)CSS";

const char kScript[] = R"JS(
(function () {
  function cellValue(row, i) {
    var c = row.cells[i];
    return c ? (c.getAttribute('data-v') || c.textContent) : '';
  }
  function sortBy(th) {
    var table = th.closest('table'), body = table.tBodies[0];
    var i = Array.prototype.indexOf.call(th.parentNode.children, th);
    var asc = th.getAttribute('aria-sort') !== 'ascending';
    Array.prototype.forEach.call(th.parentNode.children, function (h) { h.removeAttribute('aria-sort'); });
    th.setAttribute('aria-sort', asc ? 'ascending' : 'descending');
    var rows = Array.prototype.slice.call(body.rows);
    rows.sort(function (a, b) {
      var x = cellValue(a, i), y = cellValue(b, i), nx = parseFloat(x), ny = parseFloat(y);
      var c = (!isNaN(nx) && !isNaN(ny)) ? nx - ny : x.localeCompare(y);
      return asc ? c : -c;
    });
    rows.forEach(function (r) { body.appendChild(r); });
  }
  document.querySelectorAll('table.sortable th').forEach(function (th) {
    th.tabIndex = 0;
    th.addEventListener('click', function () { sortBy(th); });
    th.addEventListener('keydown', function (e) {
      if (e.key === 'Enter' || e.key === ' ') { e.preventDefault(); sortBy(th); }
    });
  });
  document.documentElement.setAttribute('data-ready', '1');
})();
)JS";

}  // namespace

std::string PageStart(const std::string& title) {
  return "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
         "<meta name=\"viewport\" content=\"width=device-width,initial-scale=1\">"
         "<meta name=\"generator\" content=\"fanfold " FANFOLD_VERSION "\">"
         "<title>" + XmlEscape(title) + "</title><style>" + kCss + "</style></head><body>" + ChartDefsSvg() + "<main>";
}

std::string PageEnd(const std::string& footer) {
  return "<footer>" + footer + "</footer></main><script>" + kScript + "</script></body></html>\n";
}

}  // namespace fanfold
