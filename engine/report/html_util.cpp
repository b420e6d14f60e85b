// Shared page frame and formatting of the report and compare pages.
#include "report/html_util.h"

#include <cmath>
#include <cstdio>

#include "hallwright/report.h"

namespace hallwright {

std::string HtmlEscape(std::string_view text) {
    std::string out;
    out.reserve(text.size());
    for (char c : text) {
        switch (c) {
            case '&': out += "&amp;"; break;
            case '<': out += "&lt;"; break;
            case '>': out += "&gt;"; break;
            case '"': out += "&quot;"; break;
            case '\'': out += "&#39;"; break;
            default: out += c;
        }
    }
    return out;
}

namespace report {

std::string Fixed(double v, int digits) {
    if (!std::isfinite(v)) return "";
    char buf[64];
    std::snprintf(buf, sizeof buf, "%.*f", digits, v);
    std::string s = buf;
    if (s.find_first_not_of("-0.") == std::string::npos && s[0] == '-') s.erase(0, 1);  // no "-0.0"
    return s;
}

int ParameterDigits(const std::string& p) {
    if (p == "C80" || p == "C50" || p == "G") return 1;
    if (p == "Ts") return 0;
    return 2;
}

std::string ParameterLabel(const std::string& p) {
    if (p == "C80") return "Clarity C80";
    if (p == "C50") return "Clarity C50";
    if (p == "D50") return "Definition D50";
    if (p == "G") return "Strength G";
    if (p == "EDT") return "Early decay time EDT";
    if (p == "T20") return "Reverberation time T20";
    if (p == "T30") return "Reverberation time T30";
    if (p == "Ts") return "Centre time Ts";
    if (p == "LF") return "Early lateral fraction LF";
    if (p == "LFC") return "Early lateral fraction LFC";
    if (p == "STI") return "Speech transmission index STI";
    return p;
}

std::string BandText(int band) { return band == 0 ? "single number" : std::to_string(band) + " Hz"; }

std::string ZoneText(const std::string& zone) { return zone.empty() ? "(no zone)" : zone; }

std::vector<double> NiceTicks(double lo, double hi, int n) {
    if (!(hi > lo)) return {lo};
    const double raw = (hi - lo) / std::max(1, n);
    const double mag = std::pow(10.0, std::floor(std::log10(raw)));
    double step = mag;
    for (double m : {1.0, 2.0, 5.0, 10.0})
        if (m * mag >= raw) {
            step = m * mag;
            break;
        }
    std::vector<double> ticks;
    for (double t = std::ceil(lo / step - 1e-9) * step; t <= hi + 1e-9 * step; t += step)
        ticks.push_back(std::abs(t) < 1e-12 * step ? 0.0 : t);
    return ticks;
}

const std::vector<std::string>& SeriesColours() {
    static const std::vector<std::string> colours = {"#2d5b8c", "#c27a1e", "#4f8a5b", "#9a3f6b",
                                                     "#6b6f1f", "#3f8fa6", "#b5523b", "#5e4a8f"};
    return colours;
}

std::string ScriptSafe(const std::string& json) {
    std::string out;
    out.reserve(json.size());
    for (char c : json) {
        if (c == '<') out += "\\u003c";
        else out += c;
    }
    return out;
}

std::string PageStart(const std::string& title) {
    return R"(<!doctype html>
<html lang="en"><head><meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>)" + HtmlEscape(title) +
           R"(</title>
<style>
:root{--ink:#1c2330;--muted:#5d6675;--line:#d9dce2;--paper:#f4f3ef;--card:#ffffff;--accent:#c27a1e;--deep:#1f3a5f}
*{box-sizing:border-box}
body{margin:0;background:var(--paper);color:var(--ink);font:15px/1.5 system-ui,-apple-system,"Segoe UI",Roboto,"Helvetica Neue",Arial,sans-serif}
header.top{background:var(--deep);color:#fff;padding:22px 0 18px;border-bottom:4px solid var(--accent)}
header.top .wrap{display:flex;justify-content:space-between;align-items:flex-end;gap:16px;flex-wrap:wrap}
header.top h1{margin:0;font-size:24px;font-weight:600;letter-spacing:.2px}
header.top .sub{color:#c9d3e2;font-size:13px}
nav.toc{position:sticky;top:0;z-index:5;background:rgba(244,243,239,.96);border-bottom:1px solid var(--line)}
nav.toc .wrap{display:flex;gap:18px;overflow-x:auto;padding:8px 20px;font-size:13px}
nav.toc a{color:var(--deep);text-decoration:none;white-space:nowrap}
nav.toc a:hover{color:var(--accent)}
.wrap{max-width:1180px;margin:0 auto;padding:0 20px}
section.card{background:var(--card);border:1px solid var(--line);border-radius:8px;margin:18px 0;padding:18px 22px}
section.card h2{margin:0 0 4px;font-size:18px;color:var(--deep)}
section.card h3{margin:16px 0 6px;font-size:15px}
p.note{color:var(--muted);font-size:13px;margin:4px 0 10px}
.kpis{display:grid;grid-template-columns:repeat(auto-fit,minmax(150px,1fr));gap:12px;margin:18px 0}
.kpi{background:var(--card);border:1px solid var(--line);border-left:4px solid var(--accent);border-radius:6px;padding:10px 14px}
.kpi .k{font-size:12px;color:var(--muted);text-transform:uppercase;letter-spacing:.6px}
.kpi .v{font-size:20px;font-weight:600}
.controls{display:flex;gap:14px;flex-wrap:wrap;align-items:center;margin:8px 0 10px;font-size:14px}
.controls label{color:var(--muted)}
.controls select{font:inherit;padding:3px 6px;border:1px solid var(--line);border-radius:4px;background:#fff}
.mapgrid{display:grid;grid-template-columns:minmax(0,1fr) 250px;gap:16px}
@media(max-width:900px){.mapgrid{grid-template-columns:1fr}}
.panel{border:1px solid var(--line);border-radius:6px;padding:10px 12px;font-size:13px;background:#fafaf8}
.panel b{color:var(--deep)}
svg{display:block;max-width:100%;height:auto}
svg text{font-family:inherit}
.outline{fill:#e9e6de;stroke:none}
.wall{stroke:#4a5261;stroke-width:1.6;stroke-linecap:round}
.zone{fill:none;stroke:#39414f;stroke-width:1;stroke-dasharray:4 3}
.zlabel{font-size:11px;fill:#39414f;font-weight:600;paint-order:stroke;stroke:#fff;stroke-width:3px;stroke-linejoin:round}
.seat{stroke:#1c2330;stroke-width:.4}
.seat:hover,.sseat:hover{stroke:#000;stroke-width:1.6}
.src{fill:#fff;stroke:var(--accent);stroke-width:2}
.axis{stroke:#8a919c;stroke-width:1}
.grid{stroke:#e6e8ec;stroke-width:1}
.tick{font-size:11px;fill:var(--muted)}
table{border-collapse:collapse;width:100%;font-size:13px;margin:6px 0 10px}
th,td{padding:5px 8px;border-bottom:1px solid var(--line);text-align:right;white-space:nowrap}
th{background:#f0efe9;color:var(--deep);font-weight:600}
th:first-child,td:first-child,td.l,th.l{text-align:left}
tr.big td{background:#fbf3e6}
.tablewrap{overflow-x:auto}
ul.sent{padding-left:20px}
ul.sent li{margin:4px 0}
.sev{display:inline-block;padding:1px 8px;border-radius:10px;font-size:12px;font-weight:600;color:#fff;margin-right:6px}
.sev.fault{background:#a33a2a}.sev.warning{background:#c27a1e}.sev.info{background:#4f6f8f}
.finding{border:1px solid var(--line);border-radius:6px;padding:10px 14px;margin:10px 0}
.finding .vals{font-size:13px;color:var(--muted)}
.warn{border-left:4px solid var(--accent);background:#fbf6ec;padding:6px 12px;margin:6px 0;font-size:13px;font-family:ui-monospace,Menlo,Consolas,monospace;white-space:pre-wrap}
.caution li{margin:5px 0}
.curves{display:grid;grid-template-columns:repeat(auto-fit,minmax(340px,1fr));gap:12px}
.smalls{display:grid;grid-template-columns:repeat(auto-fit,minmax(260px,1fr));gap:12px}
.legend-key{display:inline-flex;align-items:center;gap:6px;margin-right:14px;font-size:12px;color:var(--muted)}
.legend-key i{display:inline-block;width:18px;height:3px}
footer{color:var(--muted);font-size:12px;text-align:center;padding:20px 0 30px}
</style></head><body>
)";
}

std::string PageEnd() { return "</body></html>\n"; }

}  // namespace report
}  // namespace hallwright
