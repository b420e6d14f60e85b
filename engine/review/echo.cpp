// Echoes: a specular arrival 50 ms or more after the direct sound that stands out from what
// precedes it, judged with the echo criterion of Dietsch & Kraak (Acustica 60 (1986) 205,
// from memory; REFERENCES Part A section 6):
//   t_s(tau) = int_0^tau t |p|^n dt / int_0^tau |p|^n dt,  EK(tau) = [t_s(tau + dtE) - t_s(tau)] / dtE
// speech: n = 2/3, dtE = 9 ms, 1 kHz octave, EK50% = 1.0, EK10% = 0.9;
// music:  n = 1,   dtE = 14 ms, mean of the 1 and 2 kHz octaves, EK50% = 1.8, EK10% = 1.5.
// The response is the specular paths (image sources) plus, when given, the ray tracer's
// histograms. Without the diffuse part the build-up before a late arrival is weaker than in
// the hall, so EK comes out high: the check errs toward reporting an echo, and an exceeded
// limit is then only a "warning" (a possible echo to confirm).
#include <algorithm>
#include <cmath>
#include <limits>
#include <map>

#include "hallwright/review.h"
#include "review/review_util.h"

namespace hallwright {

namespace {

/* 50 ms after the direct sound (about 17 m path difference): common practice (Haas 1951 from
   memory; REFERENCES Part A section 6). */
constexpr double kEchoDelayS = 0.050;

struct Criterion {
    const char* name;
    double exponent, windowS, limit50, limit10;
    std::vector<int> bands;
};

/* What the criterion was evaluated on (the diffuse part errs the result toward an echo). */
constexpr const char* kResponse = "specular paths only (image sources); diffuse part not included";
constexpr const char* kFullResponse = "specular paths (image sources) plus the ray tracer's diffuse part";

const Criterion kSpeech{"Dietsch-Kraak EK, speech (1 kHz octave)", 2.0 / 3.0, 0.009, 1.0, 0.9, {4}};
const Criterion kMusic{"Dietsch-Kraak EK, music (mean of 1 and 2 kHz octaves)", 1.0, 0.014, 1.8, 1.5, {4, 5}};

struct EkResult {
    double ek = 0;
    int path = -1;  // the late arrival that makes the jump
};

/* Max EK over tau for events at times t (from the first arrival) with weights w = int |p|^n
   dt, over the windows that contain a blameable event (a specular arrival, blame[i] >= 0) at
   or after `lateS`; the strongest such event in the window is blamed. */
EkResult MaxEk(const std::vector<double>& t, const std::vector<double>& w, const std::vector<int>& blame,
               double window, double lateS) {
    const size_t n = t.size();
    std::vector<double> sumW(n + 1, 0), sumTW(n + 1, 0);
    for (size_t i = 0; i < n; ++i) {
        sumW[i + 1] = sumW[i] + w[i];
        sumTW[i + 1] = sumTW[i] + t[i] * w[i];
    }
    // t_s after the first k events.
    auto ts = [&](size_t k) { return sumW[k] > 0 ? sumTW[k] / sumW[k] : 0.0; };
    auto countUpTo = [&](double tau) {
        return static_cast<size_t>(std::upper_bound(t.begin(), t.end(), tau) - t.begin());
    };
    EkResult best;
    // t_s is a step function; the window difference is largest with the window's start just
    // before an event or its end just after one.
    std::vector<double> taus;
    for (size_t i = 0; i < n; ++i) {
        if (blame[i] < 0) continue;
        taus.push_back(t[i] - 1e-12);
        taus.push_back(t[i] - window);
    }
    for (double tau : taus) {
        if (tau < 0) continue;
        const size_t k0 = countUpTo(tau), k1 = countUpTo(tau + window);
        if (k0 == 0 || k1 == k0) continue;
        int arg = -1;
        for (size_t i = k0; i < k1; ++i)
            if (blame[i] >= 0 && t[i] >= lateS - 1e-12 && (arg < 0 || w[i] > w[arg])) arg = static_cast<int>(i);
        if (arg < 0) continue;
        const double ek = (ts(k1) - ts(k0)) / window;
        if (ek > best.ek) {
            best.ek = ek;
            best.path = blame[arg];
        }
    }
    return best;
}

/* E|x|^n for a zero-mean Gaussian of unit variance: 2^(n/2) Gamma((n+1)/2) / sqrt(pi). */
double GaussianAbsMoment(double n) { return std::pow(2.0, n / 2.0) * std::tgamma((n + 1.0) / 2.0) / std::sqrt(M_PI); }

}  // namespace

std::vector<Finding> ReviewEchoes(const Scene& scene, const Geometry& geometry,
                                  const std::vector<ReceiverPaths>& paths, const ReviewOptions& options,
                                  const std::vector<ReceiverHistogram>* diffuse) {
    // Theatres are judged for speech, concert halls for music.
    const Criterion& crit = options.venue == Venue::kTheatre ? kSpeech : kMusic;
    struct Hit {
        std::string seat, source;
        double ek, delay, pathDiff;
        int order;
    };
    std::map<std::vector<int>, std::vector<Hit>> bySequence;  // faces of the offending path -> seats
    double bestPass = 0, bestPassDelay = -1;  // delay of its strongest late path (-1: none)
    std::string bestPassSeat;
    bool anyDiffuse = false;
    std::map<std::pair<int, int>, const ReceiverHistogram*> histogramOf;
    if (diffuse)
        for (const ReceiverHistogram& h : *diffuse) histogramOf[{h.source, h.receiver}] = &h;
    for (const ReceiverPaths& rp : paths) {
        if (rp.paths.empty()) continue;
        auto hit = histogramOf.find({rp.source, rp.receiver});
        const ReceiverHistogram* hist = hit == histogramOf.end() ? nullptr : hit->second;
        std::vector<SpecularPath> sorted = rp.paths;
        std::stable_sort(sorted.begin(), sorted.end(),
                         [](const SpecularPath& a, const SpecularPath& b) { return a.delayS < b.delayS; });
        const double t0 = sorted.front().delayS;
        double ekMean = 0;
        int blamed = -1;
        for (int band : crit.bands) {
            // int |p|^n dt of each part of the band response. A specular arrival of energy e,
            // band-limited to bandwidth B, is a pulse of about 1/B with p^2 = e B; a histogram
            // bin (energy E over dt) is noise of mean square E/dt, whose |p|^n averages
            // (E/dt)^(n/2) times the Gaussian moment.
            const double n = crit.exponent;
            const double bw = BandUpperEdgeHz(band) - BandLowerEdgeHz(band);
            struct Event {
                double t, w;
                int path;
            };
            std::vector<Event> events;
            for (size_t i = 0; i < sorted.size(); ++i) {
                const double e = std::max(0.0, sorted[i].energy[band]);
                events.push_back({sorted[i].delayS - t0, std::pow(e * bw, n / 2.0) / bw, static_cast<int>(i)});
            }
            if (hist) {
                const double moment = GaussianAbsMoment(n);
                for (int b = 0; b < hist->binCount; ++b) {
                    double e = 0;
                    for (int batch = 0; batch < kBatchCount; ++batch) e += hist->Energy(batch, b, band);
                    e /= kBatchCount;
                    if (e <= 0) continue;
                    const double t = std::max(0.0, (b + 0.5) * kBinWidthS - t0);
                    events.push_back({t, kBinWidthS * moment * std::pow(e / kBinWidthS, n / 2.0), -1});
                }
            }
            std::stable_sort(events.begin(), events.end(), [](const Event& a, const Event& b) { return a.t < b.t; });
            std::vector<double> t, w;
            std::vector<int> blame;
            for (const Event& ev : events) {
                t.push_back(ev.t);
                w.push_back(ev.w);
                blame.push_back(ev.path);
            }
            const EkResult r = MaxEk(t, w, blame, crit.windowS, kEchoDelayS);
            ekMean += r.ek / crit.bands.size();
            if (blamed < 0) blamed = r.path;
        }
        const std::string seat = rp.receiver < static_cast<int>(scene.receivers.size())
                                     ? scene.receivers[rp.receiver].name
                                     : std::to_string(rp.receiver);
        anyDiffuse = anyDiffuse || hist != nullptr;
        if (blamed >= 0 && ekMean >= crit.limit10) {
            const SpecularPath& p = sorted[blamed];
            const std::string source =
                rp.source < static_cast<int>(scene.sources.size()) ? scene.sources[rp.source].name : "";
            std::vector<int> key = p.faces;  // A then B and B then A: one finding
            std::sort(key.begin(), key.end());
            bySequence[key].push_back(
                {seat, source, ekMean, p.delayS - t0, p.lengthM - sorted.front().lengthM, p.order});
        } else if (ekMean >= bestPass) {
            bestPass = ekMean;
            bestPassSeat = seat;
            bestPassDelay = blamed >= 0 ? sorted[blamed].delayS - t0 : -1;
        }
    }
    std::vector<Finding> out;
    for (const auto& [faces, hits] : bySequence) {
        const Hit* worst = &hits[0];
        for (const Hit& h : hits)
            if (h.ek > worst->ek) worst = &h;
        Finding f;
        f.rule = "echo";
        // Specular paths alone make EK high (see above): a possible echo, a warning. With the
        // diffuse part the response is complete and EK50% marks a fault.
        f.severity = anyDiffuse && worst->ek >= crit.limit50 ? "fault" : "warning";
        f.surfaces = review::GroupNames(scene, geometry, faces);
        for (const Hit& h : hits) f.seats.push_back(h.seat);
        std::sort(f.seats.begin(), f.seats.end());
        f.seats.erase(std::unique(f.seats.begin(), f.seats.end()), f.seats.end());
        f.summary = std::string(worst->ek >= crit.limit50 ? "likely" : "possible") + " echo: a reflection of order " + std::to_string(worst->order) + " arrives " +
                    review::Fixed(worst->delay * 1000.0, 0) + " ms after the direct sound (" +
                    review::Fixed(worst->pathDiff, 1) + " m longer path) with EK = " + review::Fixed(worst->ek, 2) +
                    " against " + crit.name + " limits " + review::Fixed(crit.limit10, 1) + " (10 % hear it) / " +
                    review::Fixed(crit.limit50, 1) + " (50 %)";
        f.values = {{"delay_s", worst->delay},
                    {"criterion", std::string(crit.name)},
                    {"response", std::string(anyDiffuse ? kFullResponse : kResponse)},
                    {"limit", crit.limit50},
                    {"limit_10pct", crit.limit10},
                    {"ek", worst->ek},
                    {"path_difference_m", worst->pathDiff},
                    {"order", static_cast<double>(worst->order)},
                    {"seat", worst->seat},
                    {"source", worst->source}};
        f.remedies = {"absorb or diffuse the last surface of the path", "tilt it so the reflection goes to "
                      "surfaces near the source or into absorbing areas"};
        out.push_back(std::move(f));
    }
    if (out.empty() && !paths.empty()) {
        Finding f;
        f.rule = "echo";
        f.severity = "info";
        f.summary = "no echo: the largest EK of an arrival 50 ms or more after the direct sound is " +
                    review::Fixed(bestPass, 2) + " (at " + bestPassSeat + "), below " +
                    review::Fixed(crit.limit10, 1) + " (" + crit.name + ")";
        // delay_s: the strongest late specular arrival at that seat; not applicable (NaN,
        // null in review.json, "n/a" when printed) when no specular path arrives 50 ms or
        // more after the direct sound.
        f.values.push_back({"delay_s", bestPassDelay >= 0 ? bestPassDelay : std::numeric_limits<double>::quiet_NaN()});
        f.values.push_back({"criterion", std::string(crit.name)});
        f.values.push_back({"limit", crit.limit50});
        f.values.push_back({"ek", bestPass});
        f.values.push_back({"seat", bestPassSeat});
        out.push_back(std::move(f));
    }
    return out;
}

}  // namespace hallwright
