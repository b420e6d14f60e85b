// Two runs compared: seats matched by name or position, changes in JNDs, compare.csv and a
// page with the map of the change and a sentence per zone.
#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <set>
#include <tuple>

#include <nlohmann/json.hpp>

#include "hallwright/metrics.h"
#include "hallwright/report.h"
#include "hallwright/run_compare.h"
#include "hallwright/run_tables.h"
#include "report/html_util.h"

namespace hallwright {

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

std::string Csv(const std::string& s) {
    if (s.find_first_of(",\"\n") == std::string::npos) return s;
    std::string out = "\"";
    for (char c : s) out += c == '"' ? std::string("\"\"") : std::string(1, c);
    return out + "\"";
}

bool IsSingleNumber(const std::string& p) { return p == "STI" || (p.size() > 2 && p.substr(p.size() - 2) == "_M"); }

std::string BaseName(const std::string& p) {
    return p.size() > 2 && p.substr(p.size() - 2) == "_M" ? p.substr(0, p.size() - 2) : p;
}

/* JND at the mean of the two values (relative JNDs scale with it). */
std::optional<double> JndBetween(const std::string& parameter, double a, double b) {
    return JndAt(parameter, 0.5 * (a + b));
}

}  // namespace

RunComparison CompareRuns(const RunTables& a, const RunTables& b, const CompareOptions& options) {
    RunComparison out;
    out.modelUp = a.modelUp;
    // Seat matching: by (source, name) first, then by position among the seats still free.
    std::map<std::pair<std::string, std::string>, const RunSeat*> byNameB;
    for (const auto& s : b.seats) byNameB[{s.source, s.receiver}] = &s;
    std::set<const RunSeat*> usedB;
    std::vector<std::pair<const RunSeat*, const RunSeat*>> pairs;
    std::vector<const RunSeat*> pendingA;
    for (const auto& s : a.seats) {
        auto it = byNameB.find({s.source, s.receiver});
        if (it != byNameB.end()) {
            pairs.push_back({&s, it->second});
            usedB.insert(it->second);
            ++out.matchedByName;
        } else {
            pendingA.push_back(&s);
        }
    }
    std::set<const RunSeat*> byPosition;
    for (const RunSeat* s : pendingA) {
        const RunSeat* best = nullptr;
        double bestD = options.positionToleranceM;
        for (const auto& t : b.seats) {
            if (t.source != s->source || usedB.count(&t)) continue;
            const double d = (s->position * a.metresPerUnit - t.position * b.metresPerUnit).norm();
            if (d <= bestD) bestD = d, best = &t;
        }
        if (best) {
            pairs.push_back({s, best});
            usedB.insert(best);
            byPosition.insert(s);
            ++out.matchedByPosition;
        } else {
            out.unmatchedA.push_back(s->source + "/" + s->receiver);
        }
    }
    for (const auto& t : b.seats)
        if (!usedB.count(&t)) out.unmatchedB.push_back(t.source + "/" + t.receiver);

    // Parameter rows of B by (source, receiver, parameter, band).
    std::map<std::tuple<std::string, std::string, std::string, int>, const RunParameter*> rowsB;
    for (const auto& p : b.parameters) rowsB[{p.source, p.receiver, p.parameter, p.band}] = &p;
    std::map<std::pair<std::string, std::string>, std::vector<const RunParameter*>> rowsA;
    for (const auto& p : a.parameters) rowsA[{p.source, p.receiver}].push_back(&p);

    // Zone accumulators in order of first appearance.
    struct Acc {
        ZoneChange z;
        double sumA = 0, sumB = 0, sumCiA = 0, sumCiB = 0;
        bool ciComplete = true;
    };
    std::vector<Acc> acc;
    std::map<std::tuple<std::string, std::string, std::string, int>, size_t> accIndex;

    std::sort(pairs.begin(), pairs.end(), [&](const auto& x, const auto& y) { return x.first->line < y.first->line; });
    for (const auto& [sa, sb] : pairs) {
        auto it = rowsA.find({sa->source, sa->receiver});
        if (it == rowsA.end()) continue;
        for (const RunParameter* pa : it->second) {
            if (!pa->value || !FindJnd(pa->parameter)) continue;
            auto jb = rowsB.find({sb->source, sb->receiver, pa->parameter, pa->band});
            if (jb == rowsB.end() || !jb->second->value) continue;
            const RunParameter* pb = jb->second;
            const auto jnd = JndBetween(pa->parameter, *pa->value, *pb->value);
            if (!jnd || !(*jnd > 0)) continue;
            SeatChange c;
            c.source = sa->source;
            c.receiver = sa->receiver;
            c.receiverB = sb->receiver;
            c.zone = sa->zone;
            c.parameter = pa->parameter;
            c.band = pa->band;
            c.a = *pa->value;
            c.b = *pb->value;
            c.difference = c.b - c.a;
            c.differenceJnd = c.difference / *jnd;
            c.ci95Jnd = pa->ci95 && pb->ci95 ? std::hypot(*pa->ci95, *pb->ci95) / *jnd : kNaN;
            c.matchedByPosition = byPosition.count(sa) > 0;
            c.position = sa->position;
            out.seats.push_back(c);

            const auto key = std::make_tuple(c.source, c.zone, c.parameter, c.band);
            auto [ai, inserted] = accIndex.try_emplace(key, acc.size());
            if (inserted) {
                Acc n;
                n.z.source = c.source;
                n.z.zone = c.zone;
                n.z.parameter = c.parameter;
                n.z.band = c.band;
                acc.push_back(n);
            }
            Acc& z = acc[ai->second];
            ++z.z.nSeats;
            z.sumA += c.a;
            z.sumB += c.b;
            if (pa->ci95 && pb->ci95) z.sumCiA += *pa->ci95, z.sumCiB += *pb->ci95;
            else z.ciComplete = false;
        }
    }
    for (auto& z : acc) {
        const double n = z.z.nSeats;
        z.z.a = z.sumA / n;
        z.z.b = z.sumB / n;
        z.z.difference = z.z.b - z.z.a;
        const auto jnd = JndBetween(z.z.parameter, z.z.a, z.z.b);
        z.z.differenceJnd = jnd ? z.z.difference / *jnd : kNaN;
        // Seats of one run share ray batches: the mean of their ci95 bounds the zone mean's.
        z.z.ci95Jnd = jnd && z.ciComplete ? std::hypot(z.sumCiA / n, z.sumCiB / n) / *jnd : kNaN;
        out.zones.push_back(z.z);
    }
    return out;
}

std::string FormatCompareCsv(const RunComparison& c) {
    std::string out = "source,receiver,zone,parameter,band,a,b,difference,difference_jnd,ci95_jnd\n";
    auto band = [](int b) { return b == 0 ? std::string("avg") : std::to_string(b); };
    for (const auto& s : c.seats)
        out += Csv(s.source) + "," + Csv(s.receiver) + "," + Csv(s.zone) + "," + Csv(s.parameter) + "," + band(s.band) +
               "," + FormatNumber(s.a) + "," + FormatNumber(s.b) + "," + FormatNumber(s.difference) + "," +
               FormatNumber(s.differenceJnd) + "," + FormatNumber(s.ci95Jnd) + "\n";
    for (const auto& z : c.zones)
        out += Csv(z.source) + ",(zone mean)," + Csv(z.zone) + "," + Csv(z.parameter) + "," + band(z.band) + "," +
               FormatNumber(z.a) + "," + FormatNumber(z.b) + "," + FormatNumber(z.difference) + "," +
               FormatNumber(z.differenceJnd) + "," + FormatNumber(z.ci95Jnd) + "\n";
    return out;
}

std::vector<std::string> ZoneChangeSentences(const RunComparison& c) {
    std::vector<std::string> out;
    std::vector<std::pair<std::string, std::string>> order;  // (source, zone)
    for (const auto& z : c.zones)
        if (std::find(order.begin(), order.end(), std::make_pair(z.source, z.zone)) == order.end())
            order.push_back({z.source, z.zone});
    for (const auto& [source, zone] : order) {
        std::string parts;
        for (const auto& z : c.zones) {
            if (z.source != source || z.zone != zone || z.band != 0 || !IsSingleNumber(z.parameter)) continue;
            if (!(std::abs(z.differenceJnd) > 1.0)) continue;
            const std::string base = BaseName(z.parameter);
            const std::string unit = ParameterUnit(base);
            std::string meaning;
            const bool up = z.difference > 0;
            if (base == "C80") meaning = up ? "clearer" : "more reverberant";
            else if (base == "C50" || base == "D50") meaning = up ? "more distinct speech" : "less distinct speech";
            else if (base == "G") meaning = up ? "louder" : "quieter";
            else if (base == "EDT") meaning = up ? "more reverberant" : "drier";
            else if (base == "T20" || base == "T30") meaning = up ? "longer reverberation" : "shorter reverberation";
            else if (base == "Ts") meaning = up ? "less clear" : "clearer";
            else if (base == "LF" || base == "LFC") meaning = up ? "wider source" : "narrower source";
            else if (base == "STI") meaning = up ? "better intelligibility" : "poorer intelligibility";
            parts += std::string(parts.empty() ? "" : "; ") + base + " " + (up ? "+" : "−") +
                     report::Fixed(std::abs(z.difference), report::ParameterDigits(base) + 1) +
                     (unit.empty() ? "" : " " + unit) + " (" + report::Fixed(z.differenceJnd, 1) + " JND" +
                     (std::isfinite(z.ci95Jnd) ? " ± " + report::Fixed(z.ci95Jnd, 1) : "") + ", " + meaning + ")";
        }
        const std::string where = "In " + report::ZoneText(zone) + " (source " + source + ")";
        out.push_back(parts.empty() ? where + ", option B changes no single-number value by more than one JND."
                                    : where + ", option B changes " + parts + ".");
    }
    return out;
}

std::string RenderCompareReport(const RunComparison& c, const std::string& nameA, const std::string& nameB) {
    using report::Fixed;
    std::string h = report::PageStart("Design options compared");
    h += "<header class=\"top\"><div class=\"wrap\"><div><h1>Design options compared</h1><div class=\"sub\">A: " +
         HtmlEscape(nameA) + " &middot; B: " + HtmlEscape(nameB) +
         "</div></div><div class=\"sub\">Changes B − A in just-noticeable differences</div></div></header><main "
         "class=\"wrap\">";
    h += "<div class=\"kpis\"><div class=\"kpi\"><div class=\"k\">Seats matched by name</div><div class=\"v\">" +
         std::to_string(c.matchedByName) + "</div></div><div class=\"kpi\"><div class=\"k\">Matched by position</div>"
         "<div class=\"v\">" + std::to_string(c.matchedByPosition) + "</div></div><div class=\"kpi\"><div class=\"k\">"
         "Unmatched (A / B)</div><div class=\"v\">" + std::to_string(c.unmatchedA.size()) + " / " +
         std::to_string(c.unmatchedB.size()) + "</div></div></div>";
    h += "<section class=\"card\" id=\"sentences\"><h2>What changes, zone by zone</h2><ul class=\"sent\">";
    for (const auto& s : ZoneChangeSentences(c)) h += "<li>" + HtmlEscape(s) + "</li>";
    h += "</ul><p class=\"note\">Intervals: 95 %, the two runs' Monte Carlo intervals combined in quadrature "
         "(independent runs); for zone means an upper bound. They do not include material uncertainty.</p></section>";

    // Map: the two horizontal axes are those with the largest spread of seat positions.
    std::set<std::string> params;
    for (const auto& s : c.seats)
        if (s.band == 0 && IsSingleNumber(s.parameter)) params.insert(s.parameter);
    Vec3 lo = Vec3::Constant(1e300), hi = Vec3::Constant(-1e300);
    for (const auto& s : c.seats) lo = lo.cwiseMin(s.position), hi = hi.cwiseMax(s.position);
    // Up axis from run.json, else the axis with the least spread of seat positions. Seen from
    // above, x to the right and (x cross up) downward keep the plan unmirrored: y up -> (x, z),
    // z up -> (x, -y).
    int up = c.modelUp == "z" ? 2 : 1;
    if (c.modelUp.empty() && !c.seats.empty()) {
        const Vec3 spread = hi - lo;
        spread.minCoeff(&up);
    }
    const int ax = up == 0 ? 1 : 0, ay = up == 2 ? 1 : 2;
    const double sy = up == 2 ? -1.0 : 1.0;
    if (sy < 0) std::swap(lo[ay], hi[ay]), lo[ay] = -lo[ay], hi[ay] = -hi[ay];
    h += "<section class=\"card\" id=\"map\"><h2>Map of the change</h2><p class=\"note\">Each seat coloured by the "
         "change B − A in JNDs (blue: lower in B, amber: higher in B, scale clipped at ±3 JND). Plan axes: model "
         "axes " + std::string(1, "xyz"[ax]) + " (right) and " + (sy < 0 ? "−" : "") + std::string(1, "xyz"[ay]) +
         " (down).</p><div class=\"controls\"><label for=\"sel-param\">Parameter</label><select id=\"sel-param\">";
    for (const auto& p : params) h += "<option value=\"" + HtmlEscape(p) + "\">" + HtmlEscape(p) + "</option>";
    h += "</select></div>";
    nlohmann::json seats = nlohmann::json::array();
    std::map<std::pair<std::string, std::string>, size_t> seatIndex;
    std::string marks;
    const double W = 820, M = 30;
    double sx = 1, ox = 0, oy = 0, height = 200;
    if (!c.seats.empty()) {
        const double dx = std::max(hi[ax] - lo[ax], 1e-3), dy = std::max(hi[ay] - lo[ay], 1e-3);
        sx = std::min((W - 2 * M) / dx, 520 / dy);
        ox = lo[ax];
        oy = lo[ay];
        height = dy * sx + 2 * M;
    }
    for (const auto& s : c.seats) {
        if (s.band != 0 || !IsSingleNumber(s.parameter)) continue;
        auto [it, inserted] = seatIndex.try_emplace({s.source, s.receiver}, seats.size());
        if (inserted) {
            seats.push_back({{"n", s.receiver}, {"src", s.source}, {"z", report::ZoneText(s.zone)}, {"d", nlohmann::json::object()}});
            if (s.source == c.seats.front().source)
                marks += "<circle class=\"seat\" data-i=\"" + std::to_string(it->second) + "\" data-seat=\"" +
                         HtmlEscape(s.receiver) + "\" cx=\"" + Fixed(M + (s.position[ax] - ox) * sx, 1) + "\" cy=\"" +
                         Fixed(M + (sy * s.position[ay] - oy) * sx, 1) + "\" r=\"4\" fill=\"#b9bcc2\"><title>" +
                         HtmlEscape(s.receiver) + "</title></circle>";
        }
        seats[it->second]["d"][s.parameter] = {s.differenceJnd, std::isfinite(s.ci95Jnd) ? nlohmann::json(s.ci95Jnd)
                                                                                           : nlohmann::json(nullptr)};
    }
    h += "<svg id=\"plan\" viewBox=\"0 0 " + Fixed(W, 0) + " " + Fixed(height + 40, 0) + "\" width=\"820\">" + marks;
    const auto& ramp = DivergingRamp();
    for (int i = 0; i < 64; ++i)
        h += "<rect x=\"" + Fixed(M + i * 6, 1) + "\" y=\"" + Fixed(height + 8, 1) + "\" width=\"6.5\" height=\"12\" fill=\"" +
             ramp[std::lround(i * 255.0 / 63)] + "\"/>";
    h += "<text class=\"tick\" x=\"" + Fixed(M, 0) + "\" y=\"" + Fixed(height + 34, 0) +
         "\">−3 JND</text><text class=\"tick\" x=\"" + Fixed(M + 192, 0) + "\" y=\"" + Fixed(height + 34, 0) +
         "\" text-anchor=\"middle\">0</text><text class=\"tick\" x=\"" + Fixed(M + 384, 0) + "\" y=\"" +
         Fixed(height + 34, 0) + "\" text-anchor=\"end\">+3 JND</text></svg></section>";

    // Zone table.
    h += "<section class=\"card\" id=\"zones\"><h2>Zone means</h2><div class=\"tablewrap\"><table><tr><th class=\"l\">"
         "Source</th><th class=\"l\">Zone</th><th class=\"l\">Parameter</th><th>Seats</th><th>A</th><th>B</th><th>B − A"
         "</th><th>JND</th><th>95 % (JND)</th></tr>";
    for (const auto& z : c.zones) {
        if (z.band != 0) continue;
        const int dg = report::ParameterDigits(BaseName(z.parameter));
        h += std::string("<tr") + (std::abs(z.differenceJnd) > 1 ? " class=\"big\"" : "") + "><td>" +
             HtmlEscape(z.source) + "</td><td class=\"l\">" + HtmlEscape(report::ZoneText(z.zone)) +
             "</td><td class=\"l\">" + HtmlEscape(z.parameter) + "</td><td>" + std::to_string(z.nSeats) + "</td><td>" +
             Fixed(z.a, dg) + "</td><td>" + Fixed(z.b, dg) + "</td><td>" + Fixed(z.difference, dg + 1) + "</td><td><b>" +
             Fixed(z.differenceJnd, 1) + "</b></td><td>" + (std::isfinite(z.ci95Jnd) ? "± " + Fixed(z.ci95Jnd, 1) : "") +
             "</td></tr>";
    }
    h += "</table></div></section>";
    if (!c.unmatchedA.empty() || !c.unmatchedB.empty()) {
        h += "<section class=\"card\"><h2>Unmatched seats</h2><p class=\"note\">Seats with no partner by name or within "
             "the position tolerance are left out.</p>";
        for (const auto& s : c.unmatchedA) h += "<div class=\"warn\">only in A: " + HtmlEscape(s) + "</div>";
        for (const auto& s : c.unmatchedB) h += "<div class=\"warn\">only in B: " + HtmlEscape(s) + "</div>";
        h += "</section>";
    }
    nlohmann::json data = {{"ramp", DivergingRamp()}, {"seats", seats}};
    h += "</main><script type=\"application/json\" id=\"hw-data\">" + report::ScriptSafe(data.dump()) +
         "</script><script>" + R"JS(
(function () {
  "use strict";
  var D = JSON.parse(document.getElementById("hw-data").textContent);
  var sel = document.getElementById("sel-param");
  function apply() {
    var p = sel.value;
    document.querySelectorAll("#plan circle.seat").forEach(function (c) {
      var s = D.seats[+c.getAttribute("data-i")], d = s.d[p];
      if (!d) { c.setAttribute("fill", "#b9bcc2"); c.setAttribute("data-value", ""); return; }
      var t = Math.min(1, Math.max(0, (d[0] + 3) / 6));
      c.setAttribute("fill", D.ramp[Math.min(255, Math.max(0, Math.floor(t * 255 + 0.5)))]);
      c.setAttribute("data-value", String(d[0]));
      c.querySelector("title").textContent = s.n + " (" + s.z + "): " + p + " " + d[0].toFixed(1) + " JND" +
        (d[1] !== null ? " \u00b1 " + d[1].toFixed(1) : "");
    });
  }
  sel.addEventListener("change", apply);
  apply();
})();
)JS" + "</script>\n";
    h += report::PageEnd();
    return h;
}

}  // namespace hallwright
