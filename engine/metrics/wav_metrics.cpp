// WAV path of the parameters (wav_metrics.h): octave filtering, Lundeby noise analysis,
// then the band-energy core of metrics.h.
#include "hallwright/wav_metrics.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>

#include "hallwright/octave_filter.h"
#include "hallwright/sti.h"
#include "metrics/parameter_rows.h"

namespace hallwright {

namespace {

constexpr double kTenOverLn10 = 4.342944819032518;
constexpr double kNegInf = -std::numeric_limits<double>::infinity();

std::string Fmt(const char* fmt, double v) {
    char buf[64];
    std::snprintf(buf, sizeof buf, fmt, v);
    return buf;
}

struct Intervals {
    std::vector<double> centreS, levelDb;
};

/* Mean square per sample in consecutive intervals of `len` samples over [from, to), in dB. */
Intervals Average(const std::vector<double>& sq, int fs, size_t from, size_t to, size_t len) {
    Intervals iv;
    len = std::max<size_t>(len, 1);
    for (size_t a = from; a + len <= to; a += len) {
        double s = 0;
        for (size_t n = a; n < a + len; ++n) s += sq[n];
        s /= len;
        iv.centreS.push_back((a + 0.5 * len) / fs);
        iv.levelDb.push_back(s > 0 ? 10.0 * std::log10(s) : kNegInf);
    }
    return iv;
}

double MeanSquareDb(const std::vector<double>& sq, size_t from, size_t to) {
    if (to <= from) return kNegInf;
    double s = 0;
    for (size_t n = from; n < to; ++n) s += sq[n];
    s /= (to - from);
    return s > 0 ? 10.0 * std::log10(s) : kNegInf;
}

struct Line {
    double a = 0, b = 0, seB = 0;  // level = a + b t (dB, s)
    int n = 0;
};

Line Regress(const Intervals& iv, size_t first, size_t last /* inclusive */) {
    Line l;
    double n = 0, sx = 0, sy = 0, sxx = 0, sxy = 0;
    for (size_t i = first; i <= last && i < iv.levelDb.size(); ++i) {
        if (!std::isfinite(iv.levelDb[i])) continue;
        const double x = iv.centreS[i], y = iv.levelDb[i];
        n += 1, sx += x, sy += y, sxx += x * x, sxy += x * y;
    }
    l.n = static_cast<int>(n);
    if (n < 2) return l;
    const double vx = sxx - sx * sx / n;
    if (!(vx > 0)) return l;
    l.b = (sxy - sx * sy / n) / vx;
    l.a = (sy - l.b * sx) / n;
    if (n > 2) {
        double rss = 0;
        for (size_t i = first; i <= last && i < iv.levelDb.size(); ++i) {
            if (!std::isfinite(iv.levelDb[i])) continue;
            const double r = iv.levelDb[i] - (l.a + l.b * iv.centreS[i]);
            rss += r * r;
        }
        l.seB = std::sqrt(rss / (n - 2) / vx);
    }
    return l;
}

}  // namespace

size_t FindOnsetSample(const std::vector<double>& sq) {
    double peak = 0;
    for (double v : sq) peak = std::max(peak, v);
    if (!(peak > 0)) return 0;
    for (size_t n = 0; n < sq.size(); ++n)
        if (sq[n] >= 0.01 * peak) return n;
    return 0;
}

BandNoiseAnalysis AnalyzeNoise(const std::vector<double>& sq, int fs, size_t onset) {
    BandNoiseAnalysis out;
    const size_t total = sq.size();
    out.crosspointS = static_cast<double>(total) / fs;
    if (onset >= total || total - onset < static_cast<size_t>(0.05 * fs)) {
        out.note = "less than 50 ms of response after time zero";
        return out;
    }
    const size_t span = total - onset;
    // A file that ends in digital silence: the decay ended inside it, nothing to compensate.
    const size_t lastTenth = total - span / 10;
    if (MeanSquareDb(sq, lastTenth, total) == kNegInf) {
        size_t end = total;
        while (end > onset && sq[end - 1] == 0) --end;
        out.ok = out.noiseFree = true;
        out.crosspointS = static_cast<double>(end) / fs;
        out.note = "noise-free: the response ends in silence";
        return out;
    }
    // Noise-free test: over the last 20 % the 10 ms levels still fall, by at least 3 dB and
    // by three standard errors of the fitted drop (a noise floor gives no slope).
    const size_t w10 = std::max<size_t>(1, static_cast<size_t>(0.010 * fs));
    {
        const size_t from = total - span / 5;
        const Intervals iv = Average(sq, fs, from, total, w10);
        if (iv.levelDb.size() >= 5) {
            const Line l = Regress(iv, 0, iv.levelDb.size() - 1);
            const double dur = (total - from) / static_cast<double>(fs);
            const double drop = l.b * dur, seDrop = l.seB * dur;
            if (drop < -std::max(3.0, 3.0 * seDrop)) {
                out.ok = out.noiseFree = true;
                out.lateSlopeDbPerS = l.b;
                out.note = "noise-free: the tail still decays at the end of the file (" +
                           Fmt("%.1f", -drop) + " dB over the last 20 %); truncated at its end";
                return out;
            }
        }
    }
    // Lundeby et al. 1995, steps 1-4: 10 ms averages, noise from the last 10 %, a line from
    // the peak to 10 dB above the noise, preliminary crosspoint.
    Intervals iv = Average(sq, fs, onset, total, w10);
    double noiseDb = MeanSquareDb(sq, lastTenth, total);
    size_t peak = 0;
    for (size_t i = 0; i < iv.levelDb.size(); ++i)
        if (iv.levelDb[i] > iv.levelDb[peak]) peak = i;
    const double peakDb = iv.levelDb[peak];
    out.peakToNoiseDb = peakDb - noiseDb;
    size_t stop = peak;
    while (stop < iv.levelDb.size() && !(iv.levelDb[stop] < noiseDb + 10.0)) ++stop;
    if (stop >= iv.levelDb.size() || stop < peak + 3) {
        out.note = "peak-to-noise ratio only " + Fmt("%.1f", out.peakToNoiseDb) +
                   " dB: no decay above the noise to analyse";
        return out;
    }
    Line line = Regress(iv, peak, stop - 1);
    if (!(line.b < 0)) {
        out.note = "the band does not decay above its noise";
        return out;
    }
    double tc = (noiseDb - line.a) / line.b;
    // Steps 5-9: intervals of 5 per 10 dB, noise from 10 dB of decay past the crosspoint (at
    // least the last 10 %), late slope over 20 dB starting 10 dB above the noise; iterate.
    size_t len = w10;
    for (int it = 1; it <= 5; ++it) {
        out.iterations = it;
        const double lenS = std::clamp(10.0 / -line.b / 5.0, 0.001, 0.050);
        len = std::max<size_t>(1, static_cast<size_t>(lenS * fs));
        iv = Average(sq, fs, onset, total, len);
        const double noiseStartS = tc + 10.0 / -line.b;
        size_t noiseFrom = static_cast<size_t>(std::clamp(noiseStartS * fs, double(onset), double(total)));
        noiseFrom = std::min(noiseFrom, lastTenth);
        noiseDb = MeanSquareDb(sq, noiseFrom, total);
        peak = 0;
        for (size_t i = 0; i < iv.levelDb.size(); ++i)
            if (iv.levelDb[i] > iv.levelDb[peak]) peak = i;
        Line late;
        for (double lo : {10.0, 5.0}) {
            size_t first = iv.levelDb.size(), last = 0;
            for (size_t i = peak; i < iv.levelDb.size(); ++i) {
                const double v = iv.levelDb[i];
                if (v < noiseDb + lo) break;
                if (v <= noiseDb + lo + 20.0) {
                    first = std::min(first, i);
                    last = i;
                }
            }
            if (first < iv.levelDb.size() && last >= first + 2) {
                late = Regress(iv, first, last);
                if (late.n >= 3 && late.b < 0) break;
            }
            late = Line();
        }
        if (late.n < 3 || !(late.b < 0)) break;  // keep the previous line
        line = late;
        const double tcNew = (noiseDb - line.a) / line.b;
        const bool converged = std::fabs(tcNew - tc) < static_cast<double>(len) / fs;
        tc = tcNew;
        if (converged) break;
    }
    tc = std::clamp(tc, static_cast<double>(onset) / fs, static_cast<double>(total) / fs);
    out.ok = true;
    out.crosspointS = tc;
    out.noiseLevel = std::pow(10.0, noiseDb / 10.0);
    out.lateSlopeDbPerS = line.b;
    out.peakToNoiseDb = peakDb - noiseDb;
    out.note = "crosspoint " + Fmt("%.3f", tc) + " s, noise " + Fmt("%.1f", out.peakToNoiseDb) +
               " dB below the peak (Lundeby et al. 1995)";
    // Line of the late decay at the crosspoint (for compensation) is recomputed by the caller
    // from lateSlopeDbPerS and the noise level: at tc the line meets the noise.
    return out;
}

double Iacc(const std::vector<double>& l, const std::vector<double>& r, int fs, size_t from, size_t to) {
    to = std::min({to, l.size(), r.size()});
    if (to <= from) return std::numeric_limits<double>::quiet_NaN();
    double el = 0, er = 0;
    for (size_t n = from; n < to; ++n) el += l[n] * l[n], er += r[n] * r[n];
    if (!(el > 0 && er > 0)) return std::numeric_limits<double>::quiet_NaN();
    const long maxLag = static_cast<long>(std::floor(0.001 * fs));
    double best = 0;
    // IACF(tau) = integral p_l(t) p_r(t + tau) dt over the window, normalised (Annex B).
    for (long lag = -maxLag; lag <= maxLag; ++lag) {
        double s = 0;
        for (size_t n = from; n < to; ++n) {
            const long m = static_cast<long>(n) + lag;
            if (m < static_cast<long>(from) || m >= static_cast<long>(to)) continue;
            s += l[n] * r[m];
        }
        best = std::max(best, std::fabs(s));
    }
    return best / std::sqrt(el * er);
}

ParameterTable ParametersFromWav(const WavData& wav, const WavMetricsOptions& opt, Diagnostics& diag,
                                 std::vector<BandNoiseAnalysis>* noiseOut) {
    ParameterTable table;
    const int fs = wav.sampleRate;
    const size_t frames = wav.FrameCount();
    const int need = opt.layout == ChannelLayout::kAmbix ? 4 : opt.layout == ChannelLayout::kBinaural ? 2 : 1;
    if (wav.channels < need) {
        diag.Error({}, "the layout needs " + std::to_string(need) + " channels but the file has " +
                           std::to_string(wav.channels) + " (use --channels mono)");
        return table;
    }
    if (frames < 16) {
        diag.Error({}, "the file holds only " + std::to_string(frames) + " samples");
        return table;
    }
    auto channel = [&](int c) {
        std::vector<double> x(frames);
        for (size_t n = 0; n < frames; ++n) x[n] = wav.At(n, c);
        return x;
    };
    const std::vector<double> x0 = channel(0);
    std::vector<double> broadband(frames);
    std::vector<double> x1;
    if (opt.layout == ChannelLayout::kBinaural) x1 = channel(1);
    for (size_t n = 0; n < frames; ++n)
        broadband[n] = x0[n] * x0[n] + (x1.empty() ? 0.0 : x1[n] * x1[n]);
    const size_t onset = FindOnsetSample(broadband);
    const double t0 = static_cast<double>(onset) / fs;
    table.timeZeroS = t0;
    if (opt.layout == ChannelLayout::kMono && wav.channels > 1)
        table.notes.push_back("mono analysis of channel 1 of " + std::to_string(wav.channels));

    metrics_detail::RowBuilder rows(table, 0);
    auto one = [](std::optional<double> v) { return std::vector<std::optional<double>>{v}; };

    // Binaural: IACC only (ISO 3382-1 Annex B); the other parameters need an omni response.
    if (opt.layout == ChannelLayout::kBinaural) {
        const size_t e80 = onset + static_cast<size_t>(std::llround(0.080 * fs));
        std::array<std::optional<double>, kBandCount> iaccE;
        for (int band : opt.bands) {
            auto f = OctaveFilter::Design(band, fs);
            std::optional<double> e, l;
            std::string note;
            if (!f) {
                note = "sample rate too low for this band";
            } else {
                const auto yl = f->Apply(x0, opt.timeReversedFilter), yr = f->Apply(x1, opt.timeReversedFilter);
                const double ve = Iacc(yl, yr, fs, onset, e80), vl = Iacc(yl, yr, fs, e80, frames);
                if (std::isfinite(ve)) e = ve;
                if (std::isfinite(vl)) l = vl;
                if (!e) note = "no energy in the first 80 ms";
            }
            iaccE[band] = e;
            rows.Add("IACC_E", kNominalBandHz[band], "ratio", one(e), note);
            rows.Add("IACC_L", kNominalBandHz[band], "ratio", one(l), note.empty() ? "no late energy" : note);
        }
        std::optional<double> e3;
        if (iaccE[3] && iaccE[4] && iaccE[5]) e3 = (*iaccE[3] + *iaccE[4] + *iaccE[5]) / 3.0;
        rows.Add("IACC_E3", 0, "ratio", one(e3), "needs IACC_E at 500, 1000 and 2000 Hz");
        table.notes.push_back("binaural file: only IACC is computed (the ISO 3382-1 parameters need an omni response)");
        return table;
    }

    // Lateral figure-of-eight from AmbiX (ACN/SN3D): axis horizontal, perpendicular to the
    // source direction at azimuth phi: -sin(phi) X + cos(phi) Y (REFERENCES Part B §1.4, §7.1).
    std::vector<double> fig8;
    if (opt.layout == ChannelLayout::kAmbix) {
        const double phi = opt.sourceAzimuthDeg * M_PI / 180.0;
        const std::vector<double> y = channel(1), x = channel(3);
        fig8.resize(frames);
        for (size_t n = 0; n < frames; ++n) fig8[n] = -std::sin(phi) * x[n] + std::cos(phi) * y[n];
    }

    std::array<BandParameters, kBandCount> results;
    std::array<BandNoiseAnalysis, kBandCount> noise;
    std::array<bool, kBandCount> have{};
    std::array<double, kBandCount> diracEnergy{};
    std::array<bool, kBandCount> wanted{};
    for (int band : opt.bands) wanted[band] = true;
    if (opt.sti)
        for (int band = 1; band <= kStiBands; ++band) wanted[band] = true;
    for (int band = 0; band < kBandCount; ++band) {
        noise[band].band = band;
        if (!wanted[band]) continue;
        auto f = OctaveFilter::Design(band, fs);
        if (!f) {
            noise[band].note = "sample rate " + std::to_string(fs) + " Hz too low for this band";
            results[band].edtNote = results[band].t20Note = results[band].t30Note = noise[band].note;
            results[band].energyNote = results[band].lateralNote = results[band].gNote = noise[band].note;
            continue;
        }
        diracEnergy[band] = f->DiracEnergy();
        const std::vector<double> y = f->Apply(x0, opt.timeReversedFilter);
        std::vector<double> sq(frames);
        for (size_t n = 0; n < frames; ++n) sq[n] = y[n] * y[n];
        noise[band] = AnalyzeNoise(sq, fs, onset);
        noise[band].band = band;
        if (!noise[band].ok) {
            BandParameters& r = results[band];
            r.edtNote = r.t20Note = r.t30Note = r.energyNote = r.lateralNote = r.gNote = noise[band].note;
            continue;
        }
        // Envelope truncated at the crosspoint plus the exponential tail beyond it.
        const size_t cross = std::min(frames, static_cast<size_t>(std::llround(noise[band].crosspointS * fs)));
        EnergyEnvelope env;
        env.binStartS = 0;
        env.binWidthS = 1.0 / fs;
        env.bins.assign(sq.begin(), sq.begin() + cross);
        const double endS = static_cast<double>(cross) / fs;
        if (noise[band].noiseFree) {
            FitTail(env, t0, endS);
        } else {
            // The late line meets the noise level at the crosspoint (Lundeby et al. 1995).
            env.tailStartS = endS;
            env.tailRate = noise[band].noiseLevel * fs;
            env.tailDecay = -noise[band].lateSlopeDbPerS / kTenOverLn10;
        }
        BandInput in;
        in.omni = &env;
        in.timeZeroS = t0;
        in.endS = endS;
        in.gridS = std::max(1.0 / fs, opt.decayGridS);
        // The filter delays every arrival's band energy by its energy centroid (a few ms at
        // 500 Hz, ~10 ms at 125 Hz); the 5/50/80 ms limits and Ts are measured from the
        // arrivals, so they move with it (time-reversed filtering advances instead).
        in.limitOffsetS = (opt.timeReversedFilter ? -1.0 : 1.0) * f->EnergyDelayS();
        if (opt.referenceEnergy) in.referenceEnergy = *opt.referenceEnergy * diracEnergy[band];
        EnergyEnvelope lsq, lab;
        if (!fig8.empty()) {
            const std::vector<double> yl = f->Apply(fig8, opt.timeReversedFilter);
            const size_t stop = std::min(frames, onset + static_cast<size_t>(0.1 * fs));
            for (EnergyEnvelope* e : {&lsq, &lab}) {
                e->binStartS = 0;
                e->binWidthS = 1.0 / fs;
                e->bins.assign(stop, 0.0);
            }
            for (size_t n = 0; n < stop; ++n) {
                lsq.bins[n] = yl[n] * yl[n];
                lab.bins[n] = std::fabs(yl[n] * y[n]);
            }
            in.lateralSq = &lsq;
            in.lateralAbs = &lab;
            in.lateralValidFromS = 0;
            in.lateralValidToS = static_cast<double>(stop) / fs;
        }
        results[band] = ComputeBandParameters(in);
        have[band] = true;
        if (fig8.empty()) results[band].lateralNote = "LF/LFC need an AmbiX file (--channels ambix)";
    }
    if (noiseOut) noiseOut->assign(noise.begin(), noise.end());

    for (int band : opt.bands) {
        const int hz = kNominalBandHz[band];
        const BandParameters& p = results[band];
        rows.Add("EDT", hz, "s", one(p.edt), p.edtNote);
        rows.Add("T20", hz, "s", one(p.t20), p.t20Note);
        rows.Add("T30", hz, "s", one(p.t30), p.t30Note);
        rows.Add("EDT_r", hz, "ratio", one(p.edt ? std::optional(p.edtR) : std::nullopt), p.edtNote);
        rows.Add("T20_r", hz, "ratio", one(p.t20 ? std::optional(p.t20R) : std::nullopt), p.t20Note);
        rows.Add("T30_r", hz, "ratio", one(p.t30 ? std::optional(p.t30R) : std::nullopt), p.t30Note);
        rows.Add("Curvature", hz, "%",
                 one(p.t20 && p.t30 ? std::optional(100.0 * (*p.t30 / *p.t20 - 1.0)) : std::nullopt),
                 p.t30 ? p.t20Note : p.t30Note);
        rows.Add("C50", hz, "dB", one(p.c50), p.energyNote);
        rows.Add("C80", hz, "dB", one(p.c80), p.energyNote);
        rows.Add("D50", hz, "ratio", one(p.d50), p.energyNote);
        rows.Add("Ts", hz, "ms", one(p.ts ? std::optional(*p.ts * 1000.0) : std::nullopt), p.energyNote);
        rows.Add("G", hz, "dB", one(p.g), p.gNote.empty() && !opt.referenceEnergy
                                              ? "no reference energy (sidecar or --reference-energy)"
                                              : p.gNote);
        rows.Add("LF", hz, "ratio", one(p.lf), p.lateralNote);
        rows.Add("LFC", hz, "ratio", one(p.lfc), p.lateralNote);
        const BandNoiseAnalysis& nz = noise[band];
        rows.Add("PNR", hz, "dB",
                 one(nz.ok && !nz.noiseFree ? std::optional(nz.peakToNoiseDb) : std::nullopt),
                 nz.noiseFree ? nz.note : "");
        if (nz.ok && !nz.noiseFree) rows.AppendNote("PNR", hz, nz.note);
        if (!nz.ok) rows.AppendNote("PNR", hz, nz.note);
    }

    // STI from the 7 bands 125 Hz ... 8 kHz.
    if (!opt.sti) {
        AddSingleNumbers(table);
        return table;
    }
    bool stiOk = true;
    std::string stiNote;
    Mtf mtf;
    std::array<double, kStiBands> transfer{};
    for (int k = 0; k < kStiBands; ++k) {
        if (!have[k + 1]) {
            stiOk = false;
            stiNote = "STI needs the " + std::to_string(kNominalBandHz[k + 1]) + " Hz band: " + noise[k + 1].note;
            break;
        }
        mtf[k] = results[k + 1].mtf;
        if (opt.referenceEnergy)
            transfer[k] = 10.0 * std::log10(std::max(results[k + 1].totalEnergy, 1e-300) /
                                            (*opt.referenceEnergy * diracEnergy[k + 1] * 100.0));
    }
    if (stiOk) {
        std::optional<std::array<double, kStiBands>> noiseDb;
        if (opt.speech.noiseOctaveDb) {
            noiseDb.emplace();
            for (int k = 0; k < kStiBands; ++k) (*noiseDb)[k] = (*opt.speech.noiseOctaveDb)[k + 1];
        }
        const bool levels = opt.speech.Any() && opt.referenceEnergy;
        StiResult s = levels ? ComputeSti(mtf, opt.speech.speechLevelDbA, transfer, noiseDb) : ComputeSti(mtf);
        std::string note = s.note;
        if (opt.speech.Any() && !opt.referenceEnergy)
            note = "level terms skipped: they need the reference energy";
        rows.Add("STI", 0, "ratio", one(s.sti), "");
        rows.AppendNote("STI", 0, note);
        if (opt.perBandMti)
            for (int k = 0; k < kStiBands; ++k) rows.Add("MTI", kNominalBandHz[k + 1], "ratio", one(s.mti[k]), "");
    } else {
        rows.Add("STI", 0, "ratio", one(std::nullopt), stiNote);
    }
    AddSingleNumbers(table);
    return table;
}

}  // namespace hallwright
