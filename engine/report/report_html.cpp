// The report page: seat map with a parameter selector, balcony section, zone comparison,
// differences in JNDs with plain sentences, curves, reverberation by band, findings, warnings
// and cautions. Every text that comes from the input is escaped; nothing refers to a URL.
#include <algorithm>
#include <cmath>
#include <map>
#include <set>

#include <nlohmann/json.hpp>

#include "hallwright/metrics.h"
#include "hallwright/report.h"
#include "report/html_util.h"

namespace hallwright {

using report::Fixed;
using report::ParameterDigits;
using report::ParameterLabel;
using report::ZoneText;

namespace {

std::string E(std::string_view s) { return HtmlEscape(s); }
std::string N(double v, int d = 2) { return Fixed(v, d); }
/* " ± ci" in small type, or nothing when the interval is unknown. */
std::string Pm(double ci, int d) { return std::isfinite(ci) ? " <small>± " + Fixed(ci, d) + "</small>" : ""; }

/* A value rounded to 6 significant digits (what the page shows and stores in data-value). */
double Round6(double v) { return std::strtod(FormatNumber(v, 6).c_str(), nullptr); }

/* Convex hull (Andrew's monotone chain), counter-clockwise. */
std::vector<PlanPoint> ConvexHull(std::vector<PlanPoint> p) {
    std::sort(p.begin(), p.end());
    p.erase(std::unique(p.begin(), p.end()), p.end());
    if (p.size() < 3) return p;
    auto cross = [](const PlanPoint& o, const PlanPoint& a, const PlanPoint& b) {
        return (a[0] - o[0]) * (b[1] - o[1]) - (a[1] - o[1]) * (b[0] - o[0]);
    };
    std::vector<PlanPoint> h(2 * p.size());
    size_t k = 0;
    for (size_t i = 0; i < p.size(); ++i) {
        while (k >= 2 && cross(h[k - 2], h[k - 1], p[i]) <= 0) --k;
        h[k++] = p[i];
    }
    for (size_t i = p.size() - 1, t = k + 1; i > 0; --i) {
        while (k >= t && cross(h[k - 2], h[k - 1], p[i - 1]) <= 0) --k;
        h[k++] = p[i - 1];
    }
    h.resize(k - 1);
    return h;
}

/* Maps metres to SVG pixels for a plan or a section. */
struct View {
    double minX = 0, minY = 0, scale = 1, margin = 30, width = 0, height = 0;
    bool flipY = false;
    double maxY = 0;
    double X(double x) const { return margin + (x - minX) * scale; }
    double Y(double y) const { return margin + (flipY ? (maxY - y) : (y - minY)) * scale; }
};

View FitView(PlanPoint lo, PlanPoint hi, double maxWidth, double maxHeight, bool flipY) {
    View v;
    const double dx = std::max(hi[0] - lo[0], 1e-3), dy = std::max(hi[1] - lo[1], 1e-3);
    v.scale = std::min((maxWidth - 2 * v.margin) / dx, (maxHeight - 2 * v.margin) / dy);
    v.minX = lo[0];
    v.minY = lo[1];
    v.maxY = hi[1];
    v.flipY = flipY;
    v.width = dx * v.scale + 2 * v.margin;
    v.height = dy * v.scale + 2 * v.margin;
    return v;
}

/* Median nearest-neighbour distance between seats (metres), for the mark size. */
double SeatSpacing(const std::vector<ReportSeat>& seats) {
    if (seats.size() < 2) return 1.0;
    std::vector<double> nn;
    for (size_t i = 0; i < seats.size(); ++i) {
        double best = 1e300;
        for (size_t j = 0; j < seats.size(); ++j)
            if (i != j) best = std::min(best, std::hypot(seats[i].u - seats[j].u, seats[i].v - seats[j].v));
        nn.push_back(best);
    }
    std::nth_element(nn.begin(), nn.begin() + nn.size() / 2, nn.end());
    return std::max(nn[nn.size() / 2], 0.05);
}

/* Current colouring domain of (source, parameter, band): min and max over the seats. */
bool Domain(const ReportInput& in, int source, const std::string& p, int band, double& lo, double& hi) {
    lo = 1e300;
    hi = -1e300;
    for (const auto& s : in.seats)
        if (const ReportValue* v = s.Find(source, p, band); v && v->value) {
            lo = std::min(lo, Round6(*v->value));
            hi = std::max(hi, Round6(*v->value));
        }
    return lo <= hi;
}

const std::string kMissingFill = "#b9bcc2";

std::string UnitSuffix(const std::string& p) {
    const std::string u = ParameterUnit(p);
    return u.empty() ? "" : " " + u;
}

std::string SeatTitle(const ReportSeat& s, const ReportValue* v, const std::string& p) {
    std::string t = s.name + " (" + ZoneText(s.zone) + "): ";
    if (v && v->value) {
        t += Fixed(*v->value, ParameterDigits(p)) + UnitSuffix(p);
        if (v->ci95) t += " ± " + Fixed(*v->ci95, ParameterDigits(p) + 1);
    } else {
        t += "no value";
    }
    return t;
}

// ---------------------------------------------------------------------------------------
// Sections of the page

std::string Header(const ReportInput& in) {
    std::string h = "<header class=\"top\"><div class=\"wrap\"><div><h1>" + E(in.title) +
                    "</h1><div class=\"sub\">Room-acoustic prediction report";
    if (!in.programVersion.empty()) h += " &middot; " + E(in.programVersion);
    h += "</div></div><div class=\"sub\">Predicted values &mdash; see the cautions at the end</div></div></header>\n";
    h += "<nav class=\"toc\"><div class=\"wrap\"><a href=\"#map\">Seat map</a>";
    if (in.geometry.hasSection) h += "<a href=\"#section\">Section</a>";
    h += "<a href=\"#zones\">Zones</a><a href=\"#differences\">Differences</a><a href=\"#curves\">Decay curves</a>"
         "<a href=\"#reverb\">Reverberation</a><a href=\"#findings\">Design findings</a><a href=\"#listening\">Listening</a>"
         "<a href=\"#warnings\">Warnings</a><a href=\"#cautions\">Cautions</a></div></nav>\n";
    return h;
}

std::string Kpis(const ReportInput& in) {
    std::string k = "<div class=\"kpis\">";
    auto add = [&](const std::string& key, const std::string& value) {
        k += "<div class=\"kpi\"><div class=\"k\">" + E(key) + "</div><div class=\"v\">" + E(value) + "</div></div>";
    };
    add("Seats", std::to_string(in.seats.size()));
    add("Zones", std::to_string(in.zones.size()));
    add("Sources", std::to_string(in.sources.size()));
    if (in.room) {
        add("Volume", Fixed(in.room->volumeM3, 0) + " m³");
        const double tMid = 0.5 * (in.room->eyringS[3] + in.room->eyringS[4]);
        add("Eyring T (500–1k)", Fixed(tMid, 2) + " s");
        if (in.room->volumeM3 > 0) add("Schroeder frequency", Fixed(2000 * std::sqrt(tMid / in.room->volumeM3), 0) + " Hz");
    }
    // Mean predicted T30 over all seats of the first source (single number).
    double sum = 0;
    int n = 0;
    for (const auto& s : in.seats)
        if (const ReportValue* v = s.Find(0, "T30", 0); v && v->value) sum += *v->value, ++n;
    if (n > 0) add("Predicted T30 (mean)", Fixed(sum / n, 2) + " s");
    return k + "</div>\n";
}

/* Controls shared by the plan and the section. */
std::string Controls(const ReportInput& in, bool levels) {
    std::string c = "<div class=\"controls\">";
    if (levels)
        c += "<label for=\"sel-level\">Level</label><select id=\"sel-level\"><option value=\"0\">main floor</option>"
             "<option value=\"1\">upper level</option><option value=\"all\">all levels</option></select>";
    c += "<label for=\"sel-source\">Source</label><select id=\"sel-source\">";
    for (size_t s = 0; s < in.sources.size(); ++s)
        c += "<option value=\"" + std::to_string(s) + "\">" + E(in.sources[s]) + "</option>";
    c += "</select><label for=\"sel-param\">Parameter</label><select id=\"sel-param\">";
    for (const auto& p : kReportParameters)
        c += "<option value=\"" + E(p) + "\"" + (p == "C80" ? " selected" : "") + ">" + E(ParameterLabel(p)) +
             "</option>";
    c += "</select><label for=\"sel-band\">Band</label><select id=\"sel-band\"><option value=\"0\">single number</option>";
    for (int hz : in.reportedBandsHz)
        c += "<option value=\"" + std::to_string(hz) + "\">" + std::to_string(hz) + " Hz</option>";
    c += "</select></div>\n";
    return c;
}

std::string Legend(double lo, double hi, const std::string& p, int band) {
    const auto& ramp = SequentialRamp();
    const double w = 420, x0 = 10;
    std::string s = "<svg id=\"legend\" viewBox=\"0 0 460 58\" width=\"460\" role=\"img\" aria-label=\"colour legend\">";
    for (int i = 0; i < 64; ++i) {
        const int idx = static_cast<int>(std::lround(i * 255.0 / 63.0));
        s += "<rect x=\"" + N(x0 + i * w / 64, 2) + "\" y=\"20\" width=\"" + N(w / 64 + 0.6, 2) +
             "\" height=\"14\" fill=\"" + ramp[idx] + "\"/>";
    }
    s += "<rect x=\"" + N(x0) + "\" y=\"20\" width=\"" + N(w) + "\" height=\"14\" fill=\"none\" stroke=\"#8a919c\"/>";
    s += "<text id=\"legend-title\" x=\"" + N(x0) + "\" y=\"13\" font-size=\"12\" fill=\"#1c2330\">" +
         E(ParameterLabel(p) + " — " + report::BandText(band) + (ParameterUnit(p).empty() ? "" : " (" + ParameterUnit(p) + ")")) +
         "</text>";
    for (int k = 0; k <= 4; ++k) {
        const double x = x0 + w * k / 4.0;
        s += "<line x1=\"" + N(x) + "\" x2=\"" + N(x) + "\" y1=\"34\" y2=\"39\" class=\"axis\"/>";
        s += "<text class=\"tick legend-tick\" x=\"" + N(x) + "\" y=\"52\" text-anchor=\"middle\">" +
             (lo <= hi ? E(Fixed(lo + (hi - lo) * k / 4.0, ParameterDigits(p))) : "") + "</text>";
    }
    return s + "</svg>\n";
}

std::string PlanSection(const ReportInput& in) {
    const ReportGeometry& g = in.geometry;
    const View view = FitView(g.planMin, g.planMax, 820, 600, false);
    const double spacing = SeatSpacing(in.seats);
    const double r = std::clamp(0.40 * spacing * view.scale, 1.8, 8.0);
    double lo = 0, hi = 0;
    const bool haveDomain = Domain(in, 0, "C80", 0, lo, hi);
    const auto& ramp = SequentialRamp();

    bool hasUpper = false;
    for (const auto& seat : in.seats) hasUpper = hasUpper || seat.upperLevel;
    std::string s = "<section class=\"card\" id=\"map\"><h2>Seat map</h2><p class=\"note\">Plan seen from above; "
                    "one mark per seat, coloured from low (dark blue) to high (amber) over the range found in "
                    "the hall. Grey: no value at that seat. Hover a seat for its value and interval.</p>\n";
    s += Controls(in, hasUpper);
    s += "<div class=\"mapgrid\"><div>";
    s += "<svg id=\"plan\" viewBox=\"0 0 " + N(view.width, 1) + " " + N(view.height + 24, 1) + "\" width=\"" +
         N(view.width, 0) + "\" role=\"img\" aria-label=\"plan of the seats\">";
    for (const auto& tri : g.floors) {
        s += "<polygon class=\"outline\" points=\"";
        for (const auto& p : tri) s += N(view.X(p[0]), 1) + "," + N(view.Y(p[1]), 1) + " ";
        s += "\"/>";
    }
    for (const auto& w : g.walls)
        s += "<line class=\"wall\" x1=\"" + N(view.X(w[0][0]), 1) + "\" y1=\"" + N(view.Y(w[0][1]), 1) + "\" x2=\"" +
             N(view.X(w[1][0]), 1) + "\" y2=\"" + N(view.Y(w[1][1]), 1) + "\"/>";

    // Seats are drawn per level (main floor, upper level) so that a balcony does not hide the
    // seats under it; a zone's outline goes with the level of most of its seats.
    bool anyUpper = false;
    for (const auto& seat : in.seats) anyUpper = anyUpper || seat.upperLevel;
    std::vector<std::string> levelGroups(2);
    for (size_t z = 0; z < in.zones.size(); ++z) {
        std::vector<PlanPoint> pts;
        int upper = 0;
        for (const auto& seat : in.seats)
            if (seat.zone == in.zones[z]) pts.push_back({seat.u, seat.v}), upper += seat.upperLevel;
        if (pts.empty()) continue;
        std::string& s = levelGroups[2 * upper > static_cast<int>(pts.size()) ? 1 : 0];
        auto hull = ConvexHull(pts);
        PlanPoint c{0, 0};
        for (const auto& p : hull) c[0] += p[0] / hull.size(), c[1] += p[1] / hull.size();
        s += "<polygon class=\"zone\" points=\"";
        double topY = 1e300, topX = 0;
        for (const auto& p : hull) {
            const double dx = p[0] - c[0], dy = p[1] - c[1], len = std::hypot(dx, dy);
            const double k = len > 1e-9 ? (len + 0.5 * spacing) / len : 1.0;
            const double x = view.X(c[0] + dx * k), y = view.Y(c[1] + dy * k);
            s += N(x, 1) + "," + N(y, 1) + " ";
            if (y < topY) topY = y, topX = x;
        }
        s += "\"/><text class=\"zlabel\" x=\"" + N(view.X(c[0]), 1) + "\" y=\"" +
             N(std::max(12.0, topY - 4), 1) + "\" text-anchor=\"middle\">" + E(ZoneText(in.zones[z])) + "</text>";
        (void)topX;
    }
    for (size_t i = 0; i < in.seats.size(); ++i) {
        const ReportSeat& seat = in.seats[i];
        const ReportValue* v = seat.Find(0, "C80", 0);
        const bool has = v && v->value;
        const std::string fill = has && haveDomain ? ramp[RampIndex(Round6(*v->value), lo, hi)] : kMissingFill;
        std::string& s = levelGroups[seat.upperLevel ? 1 : 0];
        s += "<circle class=\"seat\" data-i=\"" + std::to_string(i) + "\" data-seat=\"" + E(seat.name) +
             "\" data-value=\"" + (has ? FormatNumber(Round6(*v->value), 6) : "") + "\" cx=\"" + N(view.X(seat.u), 1) +
             "\" cy=\"" + N(view.Y(seat.v), 1) + "\" r=\"" + N(r, 1) + "\" fill=\"" + fill + "\"><title>" +
             E(SeatTitle(seat, v, "C80")) + "</title></circle>";
    }
    s += "<g class=\"level\" id=\"level-0\">" + levelGroups[0] + "</g><g class=\"level\" id=\"level-1\"" +
         (anyUpper ? " style=\"display:none\"" : "") + ">" + levelGroups[1] + "</g>";
    for (const auto& [name, p] : g.sources)
        s += "<g><circle class=\"src\" cx=\"" + N(view.X(p[0]), 1) + "\" cy=\"" + N(view.Y(p[1]), 1) +
             "\" r=\"5\"/><text class=\"tick\" x=\"" + N(view.X(p[0]) + 8, 1) + "\" y=\"" + N(view.Y(p[1]) + 4, 1) +
             "\">" + E(name) + "</text></g>";
    // Scale bar.
    const double barM = report::NiceTicks(0, (g.planMax[0] - g.planMin[0]) / 4, 1).back();
    if (barM > 0) {
        const double y = view.height + 10;
        s += "<line class=\"axis\" x1=\"" + N(view.margin) + "\" x2=\"" + N(view.margin + barM * view.scale) +
             "\" y1=\"" + N(y) + "\" y2=\"" + N(y) + "\" stroke-width=\"3\"/><text class=\"tick\" x=\"" +
             N(view.margin + barM * view.scale + 6) + "\" y=\"" + N(y + 4) + "\">" + Fixed(barM, 0) + " m</text>";
    }
    s += "</svg>";
    s += Legend(lo, haveDomain ? hi : lo - 1, "C80", 0);
    s += "</div><div class=\"panel\" id=\"seat-panel\"><b>Seat details</b><br>Hover or tap a seat mark to see its "
         "values for the chosen source.</div></div></section>\n";
    return s;
}

std::string SectionView(const ReportInput& in) {
    const ReportGeometry& g = in.geometry;
    if (!g.hasSection)
        return "<section class=\"card\" id=\"section\"><h2>Section</h2><p class=\"note\">No seat lies under an "
               "overhang in this model, so no balcony section is drawn.</p></section>\n";
    const View view = FitView(g.sectionMin, g.sectionMax, 820, 420, true);
    const double r = std::clamp(0.35 * SeatSpacing(in.seats) * view.scale, 1.8, 7.0);
    double lo = 0, hi = 0;
    const bool haveDomain = Domain(in, 0, "C80", 0, lo, hi);
    std::string s = "<section class=\"card\" id=\"section\"><h2>Section through the balcony</h2><p class=\"note\">"
                    "Vertical cut along the hall's main axis through the seats under the overhang; seats within " +
                    Fixed(g.sectionHalfWidthM, 1) +
                    " m of the cut are shown, coloured as on the plan. Seats under the overhang have a dark ring.</p>";
    s += "<svg id=\"section-view\" viewBox=\"0 0 " + N(view.width, 1) + " " + N(view.height, 1) + "\" width=\"" +
         N(view.width, 0) + "\" role=\"img\" aria-label=\"section\">";
    for (const auto& seg : g.sectionSegments)
        s += "<line class=\"wall\" x1=\"" + N(view.X(seg[0][0]), 1) + "\" y1=\"" + N(view.Y(seg[0][1]), 1) +
             "\" x2=\"" + N(view.X(seg[1][0]), 1) + "\" y2=\"" + N(view.Y(seg[1][1]), 1) + "\"/>";
    int shown = 0, under = 0;
    for (size_t i = 0; i < in.seats.size(); ++i) {
        const ReportSeat& seat = in.seats[i];
        if (std::abs(seat.v - g.sectionV) > g.sectionHalfWidthM) continue;
        ++shown;
        under += seat.underOverhang;
        const ReportValue* v = seat.Find(0, "C80", 0);
        const bool has = v && v->value;
        const std::string fill = has && haveDomain ? SequentialRamp()[RampIndex(Round6(*v->value), lo, hi)] : kMissingFill;
        s += "<circle class=\"sseat\" data-i=\"" + std::to_string(i) + "\" cx=\"" + N(view.X(seat.u), 1) + "\" cy=\"" +
             N(view.Y(seat.height), 1) + "\" r=\"" + N(r, 1) + "\" fill=\"" + fill + "\" stroke=\"" +
             (seat.underOverhang ? "#000\" stroke-width=\"1.4" : "#1c2330\" stroke-width=\"0.4") + "\"><title>" +
             E(SeatTitle(seat, v, "C80")) + "</title></circle>";
    }
    s += "</svg><p class=\"note\">" + std::to_string(shown) + " seats shown, " + std::to_string(under) +
         " of them under the overhang.</p></section>\n";
    return s;
}

const ReportZoneStat* FindStat(const ReportInput& in, int src, const std::string& zone, const std::string& p, int band) {
    for (const auto& z : in.zoneStats)
        if (z.source == src && z.zone == zone && z.parameter == p && z.band == band) return &z;
    return nullptr;
}

/* Small chart of one parameter: per zone the seat range (thin), the mean and its interval. */
std::string ZoneChart(const ReportInput& in, const std::string& p) {
    double lo = 1e300, hi = -1e300;
    for (const auto& z : in.zoneStats)
        if (z.parameter == p && z.band == 0) lo = std::min(lo, z.min), hi = std::max(hi, z.max);
    if (lo > hi) return "";
    if (hi - lo < 1e-9) lo -= 0.5, hi += 0.5;
    const auto ticks = report::NiceTicks(lo - 0.05 * (hi - lo), hi + 0.05 * (hi - lo), 4);
    const double y0 = std::min(lo, ticks.front()), y1 = std::max(hi, ticks.back());
    const double W = 300, H = 200, L = 46, R = 10, T = 24, B = 34;
    auto Y = [&](double v) { return T + (y1 - v) / (y1 - y0) * (H - T - B); };
    std::string s = "<svg class=\"zonechart\" data-parameter=\"" + E(p) + "\" viewBox=\"0 0 300 200\" role=\"img\">";
    s += "<text x=\"4\" y=\"14\" font-size=\"12\" font-weight=\"600\" fill=\"#1f3a5f\">" +
         E(ParameterLabel(p) + (ParameterUnit(p).empty() ? "" : " (" + ParameterUnit(p) + ")")) + "</text>";
    for (double t : ticks) {
        s += "<line class=\"grid\" x1=\"" + N(L) + "\" x2=\"" + N(W - R) + "\" y1=\"" + N(Y(t), 1) + "\" y2=\"" +
             N(Y(t), 1) + "\"/><text class=\"tick\" x=\"" + N(L - 4) + "\" y=\"" + N(Y(t) + 4, 1) +
             "\" text-anchor=\"end\">" + E(Fixed(t, ParameterDigits(p))) + "</text>";
    }
    const size_t nz = in.zones.size(), ns = std::max<size_t>(1, in.sources.size());
    const double slot = (W - L - R) / std::max<size_t>(1, nz);
    for (size_t z = 0; z < nz; ++z) {
        const double cx = L + slot * (z + 0.5);
        std::string label = ZoneText(in.zones[z]);
        if (label.size() > 16) label = label.substr(0, 15) + "…";
        s += "<text class=\"tick\" x=\"" + N(cx, 1) + "\" y=\"" + N(H - B + 16) + "\" text-anchor=\"middle\">" +
             E(label) + "</text>";
        for (size_t src = 0; src < ns; ++src) {
            const ReportZoneStat* st = FindStat(in, static_cast<int>(src), in.zones[z], p, 0);
            if (!st) continue;
            const double x = cx + (ns > 1 ? (src - (ns - 1) / 2.0) * std::min(14.0, slot / (ns + 1)) : 0);
            const std::string col = report::SeriesColours()[src % report::SeriesColours().size()];
            s += "<line x1=\"" + N(x, 1) + "\" x2=\"" + N(x, 1) + "\" y1=\"" + N(Y(st->min), 1) + "\" y2=\"" +
                 N(Y(st->max), 1) + "\" stroke=\"" + col + "\" stroke-opacity=\".35\" stroke-width=\"2\"/>";
            if (std::isfinite(st->ci95))
                s += "<line x1=\"" + N(x, 1) + "\" x2=\"" + N(x, 1) + "\" y1=\"" + N(Y(st->mean - st->ci95), 1) +
                     "\" y2=\"" + N(Y(st->mean + st->ci95), 1) + "\" stroke=\"" + col + "\" stroke-width=\"5\"/>";
            s += "<circle cx=\"" + N(x, 1) + "\" cy=\"" + N(Y(st->mean), 1) + "\" r=\"3.5\" fill=\"#fff\" stroke=\"" +
                 col + "\" stroke-width=\"2\"><title>" +
                 E(ZoneText(st->zone) + ", " + in.sources[src] + ": " + Fixed(st->mean, ParameterDigits(p) + 1) +
                   " ± " + Fixed(st->ci95, ParameterDigits(p) + 1) + " (" + std::to_string(st->nSeats) + " seats)") +
                 "</title></circle>";
        }
    }
    s += "<line class=\"axis\" x1=\"" + N(L) + "\" x2=\"" + N(L) + "\" y1=\"" + N(T) + "\" y2=\"" + N(H - B) + "\"/>";
    return s + "</svg>";
}

std::string SourceKeys(const ReportInput& in) {
    std::string s;
    for (size_t i = 0; i < in.sources.size(); ++i)
        s += "<span class=\"legend-key\"><i style=\"background:" +
             report::SeriesColours()[i % report::SeriesColours().size()] + "\"></i>" + E(in.sources[i]) + "</span>";
    return s;
}

std::string ZonesSection(const ReportInput& in) {
    std::string s = "<section class=\"card\" id=\"zones\"><h2>Zone comparison</h2><p class=\"note\">Zone means of "
                    "the single-number values (ISO 3382-1 averages over octave bands) with the 95 % interval of "
                    "the mean from the ray batches (thick bar) and the range over the zone's seats (thin bar).</p>";
    s += "<div>" + SourceKeys(in) + "</div><div class=\"smalls\">";
    for (const auto& p : kReportParameters) s += "<div>" + ZoneChart(in, p) + "</div>";
    s += "</div><div class=\"tablewrap\"><table id=\"zone-table\"><tr><th class=\"l\">Source</th><th class=\"l\">Zone</th>"
         "<th>Seats</th>";
    for (const auto& p : kReportParameters)
        s += "<th>" + E(p) + (ParameterUnit(p).empty() ? "" : " (" + E(ParameterUnit(p)) + ")") + "</th>";
    s += "</tr>";
    for (size_t src = 0; src < in.sources.size(); ++src)
        for (const auto& zone : in.zones) {
            int n = 0;
            std::string cells;
            for (const auto& p : kReportParameters) {
                const ReportZoneStat* st = FindStat(in, static_cast<int>(src), zone, p, 0);
                if (st) n = std::max(n, st->nSeats);
                cells += "<td>" + (st ? E(Fixed(st->mean, ParameterDigits(p))) + Pm(st->ci95, ParameterDigits(p) + 1)
                                      : std::string("&ndash;")) +
                         "</td>";
            }
            s += "<tr><td>" + E(in.sources[src]) + "</td><td class=\"l\">" + E(ZoneText(zone)) + "</td><td>" +
                 std::to_string(n) + "</td>" + cells + "</tr>";
        }
    s += "</table></div>";
    // Band values in a folded table.
    s += "<details><summary>Zone means by octave band</summary><div class=\"tablewrap\"><table><tr><th class=\"l\">"
         "Source</th><th class=\"l\">Zone</th><th class=\"l\">Parameter</th>";
    for (int hz : in.reportedBandsHz) s += "<th>" + std::to_string(hz) + " Hz</th>";
    s += "</tr>";
    for (size_t src = 0; src < in.sources.size(); ++src)
        for (const auto& zone : in.zones)
            for (const auto& p : kReportParameters) {
                if (p == "STI") continue;
                s += "<tr><td>" + E(in.sources[src]) + "</td><td class=\"l\">" + E(ZoneText(zone)) +
                     "</td><td class=\"l\">" + E(p) + "</td>";
                for (int hz : in.reportedBandsHz) {
                    const ReportZoneStat* st = FindStat(in, static_cast<int>(src), zone, p, hz);
                    s += "<td>" + (st ? E(Fixed(st->mean, ParameterDigits(p))) + Pm(st->ci95, ParameterDigits(p) + 1)
                                      : std::string("&ndash;")) +
                         "</td>";
                }
                s += "</tr>";
            }
    s += "</table></div></details></section>\n";
    return s;
}

std::string DifferenceRow(const ReportInput& in, const ReportZoneDifference& d) {
    const int dg = ParameterDigits(d.parameter);
    const bool big = std::abs(d.differenceJnd) > 1.0;
    return std::string("<tr") + (big ? " class=\"big\"" : "") + "><td>" +
           E(d.source < static_cast<int>(in.sources.size()) ? in.sources[d.source] : "") + "</td><td class=\"l\">" +
           E(ZoneText(d.zoneA)) + "</td><td class=\"l\">" + E(ZoneText(d.zoneB)) + "</td><td class=\"l\">" +
           E(d.parameter) + (d.band ? " " + std::to_string(d.band) + " Hz" : "") + "</td><td>" + E(Fixed(d.meanA, dg)) +
           "</td><td>" + E(Fixed(d.meanB, dg)) + "</td><td>" + E(Fixed(d.difference, dg + 1)) + UnitSuffix(d.parameter) +
           "</td><td><b>" + E(Fixed(d.differenceJnd, 1)) + "</b></td><td>" + (std::isfinite(d.ci95Jnd) ? "± " + Fixed(d.ci95Jnd, 1) : "") + "</td></tr>";
}

std::string DifferencesSection(const ReportInput& in) {
    const std::string head = "<tr><th class=\"l\">Source</th><th class=\"l\">Zone A</th><th class=\"l\">Zone B</th>"
                             "<th class=\"l\">Parameter</th><th>Mean A</th><th>Mean B</th><th>A − B</th><th>In JND</th>"
                             "<th>95 % (JND)</th></tr>";
    std::string s = "<section class=\"card\" id=\"differences\"><h2>Differences between zones</h2><p class=\"note\">"
                    "Differences of the zone means in just-noticeable differences (JND, ISO 3382-1 Annex A; EDT "
                    "and T30 relative, 5 %). A difference of more than one JND is one a listener can usually "
                    "notice; each such difference of a single-number value gets a sentence below.</p>";
    std::string rows, bandRows;
    std::vector<std::string> sentences(std::max<size_t>(1, in.sources.size()));
    int nBig = 0;
    for (const auto& d : in.zoneDifferences) {
        if (d.band == 0) {
            rows += DifferenceRow(in, d);
            const std::string sentence = DifferenceSentence(d);
            if (!sentence.empty()) {
                sentences[std::clamp<size_t>(d.source, 0, sentences.size() - 1)] += "<li>" + E(sentence) + "</li>";
                ++nBig;
            }
        } else if (std::abs(d.differenceJnd) > 1.0) {
            bandRows += DifferenceRow(in, d);
        }
    }
    s += "<h3>What a listener would notice</h3>";
    if (nBig == 0) s += "<p id=\"sentences\">No single-number value differs by more than one JND between zones.</p>";
    else {
        s += "<div id=\"sentences\">";
        for (size_t src = 0; src < sentences.size(); ++src) {
            if (sentences[src].empty()) continue;
            if (in.sources.size() > 1) s += "<p class=\"note\">Sound from " + E(in.sources[src]) + ":</p>";
            s += "<ul class=\"sent\">" + sentences[src] + "</ul>";
        }
        s += "</div>";
    }
    s += "<div class=\"tablewrap\"><table id=\"difference-table\">" + head + rows + "</table></div>";
    s += "<details><summary>Octave-band differences larger than one JND</summary><div class=\"tablewrap\"><table>" +
         head + bandRows + "</table></div></details></section>\n";
    return s;
}

/* A line chart of dB against time for the bands of one seat. */
std::string CurveChart(const SeatCurves& c, bool etc, double tEnd) {
    const double W = 420, H = 236, L = 44, R = 10, T = 24, B = 34, dbMin = -60;
    auto X = [&](double t) { return L + t / tEnd * (W - L - R); };
    auto Y = [&](double db) { return T + (0 - std::max(db, dbMin)) / (0 - dbMin) * (H - T - B); };
    std::string s = "<svg viewBox=\"0 0 420 236\" role=\"img\" class=\"" + std::string(etc ? "etc" : "decay") + "\">";
    for (double db = 0; db >= dbMin; db -= 10)
        s += "<line class=\"grid\" x1=\"" + N(L) + "\" x2=\"" + N(W - R) + "\" y1=\"" + N(Y(db), 1) + "\" y2=\"" +
             N(Y(db), 1) + "\"/><text class=\"tick\" x=\"" + N(L - 4) + "\" y=\"" + N(Y(db) + 4, 1) +
             "\" text-anchor=\"end\">" + Fixed(db, 0) + "</text>";
    for (double t : report::NiceTicks(0, tEnd, 5))
        s += "<text class=\"tick\" x=\"" + N(X(t), 1) + "\" y=\"" + N(H - B + 15) + "\" text-anchor=\"middle\">" +
             Fixed(t * 1000, 0) + "</text>";
    s += "<text class=\"tick\" x=\"" + N((L + W - R) / 2) + "\" y=\"" + N(H - 4) + "\" text-anchor=\"middle\">time after "
         "emission (ms)</text>";
    s += "<text class=\"tick\" x=\"" + N(L) + "\" y=\"10\">" +
         std::string(etc ? "energy per ms, dB re the strongest ms" : "Schroeder decay, dB") + "</text>";
    for (size_t b = 0; b < c.bands.size(); ++b) {
        const auto& band = c.bands[b];
        const auto& y = etc ? band.etcDb : band.schroederDb;
        const size_t n = std::min(y.size(), c.timeS.size());
        // Thin the points to about one per pixel column (the ETC keeps each column's peak).
        const double perPx = tEnd / (W - L - R);
        std::string path;
        size_t k = 0;
        while (k < n && c.timeS[k] <= tEnd) {
            double peak = -1e9;
            size_t j = k;
            const double colEnd = c.timeS[k] + perPx;
            while (j < n && c.timeS[j] < colEnd) peak = std::max(peak, y[j]), ++j;
            if (!etc) {
                path += std::string(path.empty() ? "M" : "L") + N(X(c.timeS[k]), 1) + " " + N(Y(y[k]), 1);
            } else if (peak > dbMin) {  // the ETC as stems from the floor of the chart
                path += "M" + N(X(c.timeS[k]), 1) + " " + N(Y(dbMin), 1) + "V" + N(Y(peak), 1);
            }
            k = std::max(j, k + 1);
        }
        s += "<path d=\"" + path + "\" fill=\"none\" stroke=\"" +
             report::SeriesColours()[b % report::SeriesColours().size()] + "\" stroke-width=\"" + (etc ? "1" : "1.6") +
             "\"/>";
    }
    s += "<line class=\"axis\" x1=\"" + N(L) + "\" x2=\"" + N(L) + "\" y1=\"" + N(T) + "\" y2=\"" + N(H - B) + "\"/>";
    return s + "</svg>";
}

std::string CurvesSection(const ReportInput& in) {
    std::string s = "<section class=\"card\" id=\"curves\"><h2>Decay curves and energy-time curves</h2><p class=\"note\">"
                    "Predicted energy at chosen seats: specular reflections plus the ray tracer's mean, in 1 ms "
                    "steps. The Schroeder curve is the backward integral of that energy (Schroeder 1965), without "
                    "compensation for the end of the record, so its last part bends down.</p>";
    if (in.curves.empty()) return s + "<p>No seat curves were included in this run.</p></section>\n";
    for (const auto& c : in.curves) {
        double tEnd = c.timeS.empty() ? 1.0 : c.timeS.back() + kBinWidthS;
        // The decay chart ends where every band has fallen 65 dB (or at the record's end).
        double tDecay = 0;
        for (const auto& b : c.bands)
            for (size_t k = 0; k < b.schroederDb.size() && k < c.timeS.size(); ++k)
                if (b.schroederDb[k] > -65) tDecay = std::max(tDecay, c.timeS[k]);
        tDecay = std::clamp(tDecay * 1.05, 0.05, tEnd);
        const double tEtc = std::min(tEnd, 0.4);
        s += "<h3>" + E(c.receiver) + " <small>(" + E(ZoneText(c.zone)) + ", source " + E(c.source) + ")</small></h3><div>";
        for (size_t b = 0; b < c.bands.size(); ++b)
            s += "<span class=\"legend-key\"><i style=\"background:" +
                 report::SeriesColours()[b % report::SeriesColours().size()] + "\"></i>" +
                 std::to_string(c.bands[b].hz) + " Hz</span>";
        s += "</div><div class=\"curves\">" + CurveChart(c, false, tDecay) + CurveChart(c, true, tEtc) + "</div>";
    }
    return s + "</section>\n";
}

std::string ReverbSection(const ReportInput& in) {
    std::string s = "<section class=\"card\" id=\"reverb\"><h2>Reverberation time by band</h2>";
    const auto& bands = in.reportedBandsHz;
    if (bands.empty()) return s + "</section>\n";
    s += "<p class=\"note\">Predicted T30 (zone means, source " + E(in.sources.empty() ? "" : in.sources[0]) +
         ", with 95 % intervals) against the statistical estimates of Sabine (1900) and Eyring (1930) for the "
         "whole room, both with air absorption (ISO 9613-1).</p>";
    double hi = 0;
    auto eyr = [&](int hz) { return in.room ? in.room->eyringS[*BandIndexOfNominal(hz)] : 0.0; };
    auto sab = [&](int hz) { return in.room ? in.room->sabineS[*BandIndexOfNominal(hz)] : 0.0; };
    for (int hz : bands) {
        if (!BandIndexOfNominal(hz)) return s + "</section>\n";
        hi = std::max({hi, eyr(hz), sab(hz)});
        for (const auto& z : in.zones)
            if (const ReportZoneStat* st = FindStat(in, 0, z, "T30", hz)) hi = std::max(hi, st->mean + st->ci95);
    }
    if (!(hi > 0)) hi = 1;
    const auto ticks = report::NiceTicks(0, hi * 1.1, 5);
    const double top = std::max(ticks.back(), hi * 1.05);
    const double W = 680, H = 310, L = 50, R = 150, T = 26, B = 36;
    const double slot = (W - L - R) / bands.size();
    auto X = [&](size_t i) { return L + slot * (i + 0.5); };
    auto Y = [&](double v) { return T + (top - v) / top * (H - T - B); };
    s += "<svg id=\"rt-chart\" viewBox=\"0 0 680 310\" width=\"680\" role=\"img\">";
    for (double t : ticks)
        s += "<line class=\"grid\" x1=\"" + N(L) + "\" x2=\"" + N(W - R) + "\" y1=\"" + N(Y(t), 1) + "\" y2=\"" +
             N(Y(t), 1) + "\"/><text class=\"tick\" x=\"" + N(L - 5) + "\" y=\"" + N(Y(t) + 4, 1) +
             "\" text-anchor=\"end\">" + Fixed(t, 1) + "</text>";
    for (size_t i = 0; i < bands.size(); ++i)
        s += "<text class=\"tick\" x=\"" + N(X(i), 1) + "\" y=\"" + N(H - B + 16) + "\" text-anchor=\"middle\">" +
             std::to_string(bands[i]) + "</text>";
    s += "<text class=\"tick\" x=\"" + N((L + W - R) / 2) + "\" y=\"" + N(H - 4) +
         "\" text-anchor=\"middle\">octave band (Hz)</text><text class=\"tick\" x=\"4\" y=\"12\">seconds</text>";
    auto line = [&](auto value, const std::string& style, const std::string& label, double legendY) {
        std::string path;
        for (size_t i = 0; i < bands.size(); ++i) path += std::string(i ? "L" : "M") + N(X(i), 1) + " " + N(Y(value(bands[i])), 1);
        s += "<path d=\"" + path + "\" fill=\"none\" " + style + "/>";
        s += "<line x1=\"" + N(W - R + 12) + "\" x2=\"" + N(W - R + 34) + "\" y1=\"" + N(legendY) + "\" y2=\"" +
             N(legendY) + "\" " + style + "/><text class=\"tick\" x=\"" + N(W - R + 40) + "\" y=\"" + N(legendY + 4) +
             "\">" + E(label) + "</text>";
    };
    if (in.room) {
        line(sab, "stroke=\"#7a8594\" stroke-width=\"2\" stroke-dasharray=\"6 4\"", "Sabine", T + 10);
        line(eyr, "stroke=\"#1c2330\" stroke-width=\"1.5\" stroke-dasharray=\"2 3\"", "Eyring", T + 28);
    }
    for (size_t z = 0; z < in.zones.size(); ++z) {
        const std::string col = report::SeriesColours()[z % report::SeriesColours().size()];
        std::string path;
        for (size_t i = 0; i < bands.size(); ++i) {
            const ReportZoneStat* st = FindStat(in, 0, in.zones[z], "T30", bands[i]);
            if (!st) continue;
            const double x = X(i) + (z - (in.zones.size() - 1) / 2.0) * 6;
            path += std::string(path.empty() ? "M" : "L") + N(x, 1) + " " + N(Y(st->mean), 1);
            if (std::isfinite(st->ci95))
                s += "<line x1=\"" + N(x, 1) + "\" x2=\"" + N(x, 1) + "\" y1=\"" + N(Y(st->mean - st->ci95), 1) +
                     "\" y2=\"" + N(Y(st->mean + st->ci95), 1) + "\" stroke=\"" + col + "\" stroke-width=\"3\"/>";
            s += "<circle cx=\"" + N(x, 1) + "\" cy=\"" + N(Y(st->mean), 1) + "\" r=\"3\" fill=\"" + col + "\"/>";
        }
        if (!path.empty()) s += "<path d=\"" + path + "\" fill=\"none\" stroke=\"" + col + "\" stroke-width=\"1.5\"/>";
        const double ly = T + 46 + 18 * z;
        s += "<line x1=\"" + N(W - R + 12) + "\" x2=\"" + N(W - R + 34) + "\" y1=\"" + N(ly) + "\" y2=\"" + N(ly) +
             "\" stroke=\"" + col + "\" stroke-width=\"3\"/><text class=\"tick\" x=\"" + N(W - R + 40) + "\" y=\"" +
             N(ly + 4) + "\">" + E(ZoneText(in.zones[z])) + "</text>";
    }
    s += "<line class=\"axis\" x1=\"" + N(L) + "\" x2=\"" + N(L) + "\" y1=\"" + N(T) + "\" y2=\"" + N(H - B) + "\"/></svg>";
    // Table.
    s += "<div class=\"tablewrap\"><table id=\"rt-table\"><tr><th class=\"l\">Band</th><th>Sabine (s)</th><th>Eyring (s)</th>";
    for (const auto& z : in.zones) s += "<th>T30 " + E(ZoneText(z)) + " (s)</th>";
    s += "<th>Schroeder f (Hz)</th></tr>";
    for (int hz : bands) {
        s += "<tr><td>" + std::to_string(hz) + " Hz</td><td>" + (in.room ? Fixed(sab(hz), 2) : "") + "</td><td>" +
             (in.room ? Fixed(eyr(hz), 2) : "") + "</td>";
        for (const auto& z : in.zones) {
            const ReportZoneStat* st = FindStat(in, 0, z, "T30", hz);
            s += "<td>" + (st ? Fixed(st->mean, 2) + Pm(st->ci95, 2) : "&ndash;") + "</td>";
        }
        s += "<td>" + (in.room ? Fixed(in.room->schroederHz[*BandIndexOfNominal(hz)], 0) : "") + "</td></tr>";
    }
    s += "</table></div>";
    if (in.room && in.room->volumeM3 > 0) {
        const double tMid = 0.5 * (in.room->eyringS[3] + in.room->eyringS[4]);
        const double fs = 2000 * std::sqrt(tMid / in.room->volumeM3);
        s += "<p id=\"schroeder\">Schroeder frequency f<sub>S</sub> ≈ 2000 √(T/V) = <b>" + Fixed(fs, 0) +
             " Hz</b> (T = " + Fixed(tMid, 2) + " s, Eyring at 500–1000 Hz; V = " + Fixed(in.room->volumeM3, 0) +
             " m³; Schroeder, after Kuttruff, Room Acoustics). Below it single room modes dominate and "
             "ray-based predictions are less reliable.</p>";
    }
    return s + "</section>\n";
}

std::string ValueText(const nlohmann::json& v) {
    if (v.is_number()) return Fixed(v.get<double>(), std::abs(v.get<double>()) >= 100 ? 0 : 3);
    if (v.is_null()) return "n/a";  // a value that does not apply (NaN in the engine)
    if (v.is_string()) return v.get<std::string>();
    if (v.is_array()) {
        std::string s = "[";
        for (size_t i = 0; i < v.size(); ++i) s += (i ? ", " : "") + ValueText(v[i]);
        return s + "]";
    }
    return v.dump();
}

std::string FindingsSection(const ReportInput& in) {
    std::string s = "<section class=\"card\" id=\"findings\"><h2>Design findings</h2><p class=\"note\">Classic "
                    "faults checked on the model: flutter, echoes, focusing, balcony overhangs and absorbers with "
                    "heavy facings. \"info\" means the item passes its guideline.</p>";
    if (in.findingsJson.empty()) return s + "<p>No design review was included in this run.</p></section>\n";
    const nlohmann::json j = nlohmann::json::parse(in.findingsJson, nullptr, false);
    const nlohmann::json* list = nullptr;
    if (j.is_array()) list = &j;
    else if (j.is_object() && j.contains("findings") && j["findings"].is_array()) list = &j["findings"];
    if (!list) return s + "<p class=\"warn\">The design findings could not be read (not a review.json text).</p></section>\n";
    if (list->empty()) return s + "<p>The review found nothing to report.</p></section>\n";
    // Faults first, then warnings, then passes.
    std::vector<const nlohmann::json*> order;
    for (const auto& f : *list) order.push_back(&f);
    auto rank = [](const nlohmann::json* f) {
        const std::string sev = f->is_object() ? f->value("severity", "") : "";
        return sev == "fault" ? 0 : sev == "warning" ? 1 : 2;
    };
    std::stable_sort(order.begin(), order.end(), [&](auto a, auto b) { return rank(a) < rank(b); });
    for (const auto* f : order) {
        if (!f->is_object()) continue;
        std::string sev = f->value("severity", "info");
        if (sev != "fault" && sev != "warning") sev = "info";
        s += "<div class=\"finding\"><span class=\"sev " + sev + "\">" + E(sev) + "</span><b>" +
             E(f->value("rule", "")) + "</b> &mdash; " + E(f->value("summary", ""));
        auto names = [&](const char* key, const char* label) {
            if (!f->contains(key) || !(*f)[key].is_array() || (*f)[key].empty()) return;
            const auto& a = (*f)[key];
            std::string t;
            for (size_t i = 0; i < a.size() && i < 12; ++i) t += (i ? ", " : "") + ValueText(a[i]);
            if (a.size() > 12) t += " and " + std::to_string(a.size() - 12) + " more";
            s += "<div class=\"vals\">" + std::string(label) + ": " + E(t) + "</div>";
        };
        names("surfaces", "Surfaces");
        names("seats", "Seats");
        if (f->contains("values") && (*f)["values"].is_object()) {
            std::string t;
            for (const auto& [k, v] : (*f)["values"].items()) t += (t.empty() ? "" : "; ") + k + " = " + ValueText(v);
            if (!t.empty()) s += "<div class=\"vals\">" + E(t) + "</div>";
        }
        if (f->contains("remedies") && (*f)["remedies"].is_array() && !(*f)["remedies"].empty()) {
            s += "<div class=\"vals\">Usual remedies:</div><ul>";
            for (const auto& r : (*f)["remedies"]) s += "<li>" + E(ValueText(r)) + "</li>";
            s += "</ul>";
        }
        s += "</div>";
    }
    return s + "</section>\n";
}

std::string WarningsSection(const ReportInput& in) {
    std::string s = "<section class=\"card\" id=\"warnings\"><h2>Warnings</h2>";
    if (in.warnings.empty()) return s + "<p>The run reported no warnings.</p></section>\n";
    for (const auto& w : in.warnings) s += "<div class=\"warn\">" + E(w) + "</div>";
    return s + "</section>\n";
}

/* Audio players for the listening files, grouped by source; links are relative files beside
   the report (audio is too large to inline). */
std::string ListeningSection(const ReportInput& in) {
    std::string s = "<section class=\"card\" id=\"listening\"><h2>Listening</h2>";
    if (in.listening.empty())
        return s + "<p class=\"note\">No listening files in this run. <code>hallwright simulate SCENE --out DIR "
                   "--listen DRY.wav</code> renders a dry recording through the seats that have binaural files.</p>"
                   "</section>\n";
    s += "<p class=\"note\">The dry recording <code>" + E(in.listeningDry) +
         "</code> through the predicted response of each seat. Binaural files are for headphones. Every file got the "
         "same gain (" + Fixed(in.listeningGainDb, 1) +
         " dB, the loudest at its stated peak), so the level differences between seats are the predicted ones; the "
         "absolute level is not the hall's. <b>Start playback quietly.</b> The files sit beside this page; open "
         "the page from the run's folder for the players to find them.</p>";
    s += "<p class=\"note\">Each reflection in these responses has an arbitrary phase (absorption data carry none), "
         "so a seat's file is one plausible version of the prediction: its colouration by early reflections is "
         "typical, not exact, and its parameters scatter around the tables' values (about one JND at a seat, none "
         "on average).</p>";
    s += "<div class=\"tablewrap\"><table id=\"listening-table\"><tr><th class=\"l\">Source</th><th class=\"l\">Zone</th>"
         "<th class=\"l\">Seat</th><th>Peak</th><th class=\"l\">Listen</th></tr>";
    for (const auto& l : in.listening)
        s += "<tr><td class=\"l\">" + E(l.source) + "</td><td class=\"l\">" + E(l.zone) + "</td><td class=\"l\">" +
             E(l.seat) + "</td><td>" + Fixed(l.peakDbfs, 1) + " dBFS</td><td class=\"l\"><audio controls preload=\"none\" src=\"" + E(l.file) +
             "\"></audio> <a href=\"" + E(l.file) + "\">" + (l.layout == "binaural-lr" ? "binaural" : "mono") +
             " file</a></td></tr>";
    return s + "</table></div></section>\n";
}

std::string CautionsSection(const ReportInput& in) {
    std::string s = "<section class=\"card caution\" id=\"cautions\"><h2>Cautions</h2><ul>";
    s += "<li><b>Estimates only.</b> Every value here is a prediction from a geometric model (image sources and "
         "stochastic ray tracing) with the absorption and scattering data entered; a built hall will differ.</li>";
    s += "<li><b>Intervals cover Monte Carlo noise only.</b> The ± values are 95 % intervals from independent ray "
         "batches";
    if (in.raysPerSource > 0) s += " (" + std::to_string(in.raysPerSource) + " rays per source)";
    s += ". They do not include the uncertainty of the material data, of the model's geometry or of the "
         "method itself, which is usually larger.</li>";
    s += "<li><b>Not validated against measured halls.</b> This program has been checked against formulas and "
         "published reference values, not against measurements in built rooms.</li>";
    s += "<li><b>Defer to local codes and a licensed acoustician.</b> Decisions on a building must follow the "
         "applicable regulations and the advice of a qualified, licensed acoustic consultant.</li>";
    s += "<li><b>Playback can be loud.</b> Impulse responses written with this run are calibrated in level, and "
         "listening files are normalised so the loudest peaks near full scale; start playback at a low volume, "
         "especially on headphones.</li>";
    return s + "</ul></section>\n";
}

/* The data the script needs to recolour marks (values rounded as shown). */
std::string DataJson(const ReportInput& in) {
    nlohmann::json j;
    j["ramp"] = SequentialRamp();
    j["missing"] = kMissingFill;
    j["sources"] = in.sources;
    nlohmann::json params = nlohmann::json::array();
    for (const auto& p : kReportParameters) {
        nlohmann::json bands = nlohmann::json::array({0});
        if (p != "STI")
            for (int hz : in.reportedBandsHz) bands.push_back(hz);
        params.push_back({{"id", p}, {"label", ParameterLabel(p)}, {"unit", ParameterUnit(p)},
                          {"digits", ParameterDigits(p)}, {"bands", bands}});
    }
    j["params"] = params;
    nlohmann::json seats = nlohmann::json::array();
    for (const auto& s : in.seats) {
        nlohmann::json vals = nlohmann::json::array();
        for (const auto& perSource : s.values) {
            nlohmann::json o = nlohmann::json::object();
            for (const auto& v : perSource) {
                if (!v.value) continue;
                o[v.parameter + "@" + std::to_string(v.band)] = {
                    Round6(*v.value), v.ci95 ? nlohmann::json(Round6(*v.ci95)) : nlohmann::json(nullptr)};
            }
            vals.push_back(o);
        }
        const Vec3& m = s.model;
        seats.push_back({{"n", s.name}, {"z", ZoneText(s.zone)}, {"ub", s.underOverhang},
                         {"m", {Round6(m.x()), Round6(m.y()), Round6(m.z())}}, {"val", vals}});
    }
    j["seats"] = seats;
    return report::ScriptSafe(j.dump());
}

const char* kScript = R"JS(
(function () {
  "use strict";
  var D = JSON.parse(document.getElementById("hw-data").textContent);
  var selS = document.getElementById("sel-source");
  var selP = document.getElementById("sel-param");
  var selB = document.getElementById("sel-band");
  var panel = document.getElementById("seat-panel");
  function param(id) {
    for (var i = 0; i < D.params.length; i++) if (D.params[i].id === id) return D.params[i];
    return D.params[0];
  }
  function value(i, s, p, b) {
    var o = D.seats[i].val[s];
    if (!o) return null;
    var x = o[p + "@" + b];
    return x === undefined ? null : x;
  }
  function rampIndex(v, lo, hi) {
    var t = hi > lo ? (v - lo) / (hi - lo) : 0.5;
    t = Math.min(1, Math.max(0, t));
    return Math.min(255, Math.max(0, Math.floor(t * 255 + 0.5)));
  }
  function unitText(P) { return P.unit ? " " + P.unit : ""; }
  function fillBands(P, keep) {
    selB.innerHTML = "";
    P.bands.forEach(function (b) {
      var o = document.createElement("option");
      o.value = String(b);
      o.textContent = b === 0 ? "single number" : b + " Hz";
      selB.appendChild(o);
    });
    selB.value = P.bands.indexOf(keep) >= 0 ? String(keep) : "0";
  }
  function apply() {
    var s = +selS.value, P = param(selP.value), b = +selB.value;
    var lo = Infinity, hi = -Infinity, i, x;
    for (i = 0; i < D.seats.length; i++) {
      x = value(i, s, P.id, b);
      if (x) { lo = Math.min(lo, x[0]); hi = Math.max(hi, x[0]); }
    }
    var have = lo <= hi;
    function paint(c, withValue) {
      var k = +c.getAttribute("data-i"), seat = D.seats[k], y = value(k, s, P.id, b);
      c.setAttribute("fill", y && have ? D.ramp[rampIndex(y[0], lo, hi)] : D.missing);
      if (withValue) c.setAttribute("data-value", y ? String(y[0]) : "");
      var t = c.querySelector("title");
      if (t) t.textContent = seat.n + " (" + seat.z + "): " + (y ? y[0].toFixed(P.digits) + unitText(P) +
          (y[1] !== null ? " \u00b1 " + y[1].toFixed(P.digits + 1) : "") : "no value");
    }
    document.querySelectorAll("#plan circle.seat").forEach(function (c) { paint(c, true); });
    document.querySelectorAll("#section-view circle.sseat").forEach(function (c) { paint(c, false); });
    var ticks = document.querySelectorAll("#legend .legend-tick");
    ticks.forEach(function (t, k) { t.textContent = have ? (lo + (hi - lo) * k / 4).toFixed(P.digits) : ""; });
    var title = document.getElementById("legend-title");
    title.textContent = P.label + " \u2014 " + (b === 0 ? "single number" : b + " Hz") + (P.unit ? " (" + P.unit + ")" : "");
    var h = "#p=" + P.id + "&b=" + b + "&s=" + s;
    if (window.location.hash !== h && window.history && window.history.replaceState) window.history.replaceState(null, "", h);
  }
  function show(k) {
    var s = +selS.value, seat = D.seats[k], rows = "";
    D.params.forEach(function (P) {
      var y = value(k, s, P.id, 0);
      rows += "<tr><td>" + P.id + "</td><td>" + (y ? y[0].toFixed(P.digits) + unitText(P) : "\u2013") + "</td><td>" +
        (y && y[1] !== null ? "\u00b1 " + y[1].toFixed(P.digits + 1) : "") + "</td></tr>";
    });
    panel.innerHTML = "";
    var head = document.createElement("b");
    head.textContent = seat.n;
    panel.appendChild(head);
    var sub = document.createElement("div");
    sub.textContent = seat.z + (seat.ub ? ", under the overhang" : "") + " \u00b7 (" + seat.m.join(", ") + ")";
    panel.appendChild(sub);
    var tbl = document.createElement("table");
    tbl.innerHTML = rows;
    panel.appendChild(tbl);
  }
  document.querySelectorAll("#plan circle.seat, #section-view circle.sseat").forEach(function (c) {
    c.addEventListener("mouseenter", function () { show(+c.getAttribute("data-i")); });
    c.addEventListener("click", function () { show(+c.getAttribute("data-i")); });
  });
  var selL = document.getElementById("sel-level");
  if (selL) selL.addEventListener("change", function () {
    ["0", "1"].forEach(function (k) {
      document.getElementById("level-" + k).style.display = selL.value === "all" || selL.value === k ? "" : "none";
    });
  });
  selP.addEventListener("change", function () { fillBands(param(selP.value), +selB.value); apply(); });
  selB.addEventListener("change", apply);
  selS.addEventListener("change", apply);
  var q = {};
  window.location.hash.replace(/^#/, "").split("&").forEach(function (kv) {
    var a = kv.split("=");
    if (a.length === 2) q[a[0]] = decodeURIComponent(a[1]);
  });
  if (q.p && D.params.some(function (P) { return P.id === q.p; })) selP.value = q.p;
  if (q.s !== undefined && +q.s >= 0 && +q.s < D.sources.length) selS.value = q.s;
  fillBands(param(selP.value), q.b !== undefined ? +q.b : 0);
  apply();
})();
)JS";

}  // namespace

std::string DifferenceSentence(const ReportZoneDifference& d) {
    if (!(std::abs(d.differenceJnd) > 1.0)) return "";
    const std::string& p = d.parameter;
    const bool up = d.difference > 0;
    const bool time = p == "EDT" || p == "T20" || p == "T30" || p == "Ts";
    const char* more = time ? (p == "Ts" ? "later" : "longer") : "higher";
    const char* less = time ? (p == "Ts" ? "earlier" : "shorter") : "lower";
    std::string meaning;
    if (p == "C80") meaning = up ? "the sound there is clearer and less reverberant" : "the sound there is more reverberant and less clear";
    else if (p == "C50") meaning = up ? "speech there is clearer" : "speech there is less clear";
    else if (p == "D50") meaning = up ? "speech there is more distinct" : "speech there is less distinct";
    else if (p == "G") meaning = up ? "the sound there is louder" : "the sound there is quieter";
    else if (p == "EDT") meaning = up ? "the sound there seems more reverberant" : "the sound there seems drier, less reverberant";
    else if (p == "T20" || p == "T30") meaning = up ? "the reverberant tail there lasts longer" : "the reverberant tail there dies away sooner";
    else if (p == "Ts") meaning = up ? "the sound there is less clear, more reverberant" : "the sound there is clearer";
    else if (p == "LF" || p == "LFC") meaning = up ? "the source there sounds wider" : "the source there sounds narrower";
    else if (p == "STI") meaning = up ? "speech intelligibility there is better" : "speech intelligibility there is poorer";
    else meaning = "a listener may notice the difference";
    const std::string unit = ParameterUnit(p);
    const int dg = ParameterDigits(p) + (std::abs(d.difference) < std::pow(10.0, -ParameterDigits(p)) * 5 ? 1 : 0);
    std::string s = "In " + ZoneText(d.zoneA) + ", " + p + (d.band ? " at " + std::to_string(d.band) + " Hz" : "") +
                    " is " + Fixed(std::abs(d.difference), dg) + (unit.empty() ? "" : " " + unit) + " " +
                    (up ? more : less) + " than in " + ZoneText(d.zoneB) + " (" + Fixed(std::abs(d.differenceJnd), 1) +
                    " JND" + (std::isfinite(d.ci95Jnd) ? ", 95 % interval ± " + Fixed(d.ci95Jnd, 1) + " JND" : ", no interval") +
                    "): " + meaning + ".";
    if (std::isfinite(d.ci95Jnd) && std::abs(d.differenceJnd) - d.ci95Jnd < 1.0)
        s += " The interval reaches below one JND, so more rays would be needed to be sure.";
    return s;
}

std::string RenderReport(const ReportInput& in) {
    std::string html = report::PageStart(in.title.empty() ? "Room-acoustic report" : in.title + " — acoustic report");
    html += Header(in);
    html += "<main class=\"wrap\">";
    html += Kpis(in);
    html += PlanSection(in);
    html += SectionView(in);
    html += ZonesSection(in);
    html += DifferencesSection(in);
    html += CurvesSection(in);
    html += ReverbSection(in);
    html += FindingsSection(in);
    html += ListeningSection(in);
    html += WarningsSection(in);
    html += CautionsSection(in);
    html += "</main><footer>Generated by " + E(in.programVersion.empty() ? "hallwright" : in.programVersion) +
            ". Predicted values with Monte Carlo intervals; see the cautions.</footer>";
    html += "<script type=\"application/json\" id=\"hw-data\">" + DataJson(in) + "</script>\n<script>" + kScript +
            "</script>\n";
    html += report::PageEnd();
    return html;
}

}  // namespace hallwright
