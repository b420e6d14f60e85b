// Binaural impulse responses: specular paths through the HRIR pair of their direction, the
// late part decoded from first-order AmbiX to eight virtual sources, each through its HRIRs.
#include <cmath>
#include <complex>
#include <memory>
#include <mutex>
#include <utility>
#include <vector>

#include <mysofa.h>

#include "hallwright/response.h"
#include "response/fft.h"
#include "response/synthesis_internal.h"

namespace hallwright {

struct HrtfSet::Impl {
    MYSOFA_EASY* easy = nullptr;
    int filterLength = 0;
    mutable std::mutex mutex;  // libmysofa's lookup writes into a scratch buffer
    /* Decoder filters of the late part per FFT size (see SynthesizeBinaural): for each
       size, [ear * 4 + channel][bin]. Every seat of a run uses the same size. */
    mutable std::mutex decoderMutex;
    mutable std::vector<std::pair<int, std::shared_ptr<const std::vector<std::vector<std::complex<float>>>>>> decoders;
};

HrtfSet::HrtfSet() : impl_(std::make_unique<Impl>()) {}
HrtfSet::~HrtfSet() {
    if (impl_ && impl_->easy) mysofa_close(impl_->easy);
}

std::unique_ptr<HrtfSet> HrtfSet::Open(const std::string& path, int sampleRate, Diagnostics& diag) {
    std::unique_ptr<HrtfSet> set(new HrtfSet());
    int err = 0;
    // mysofa_open resamples the set to sampleRate and normalises it (libmysofa README).
    set->impl_->easy = mysofa_open(path.c_str(), static_cast<float>(sampleRate), &set->impl_->filterLength, &err);
    if (!set->impl_->easy || err != MYSOFA_OK) {
        diag.Error({path, 0, 0, ""}, "cannot read the HRTF set (libmysofa error " + std::to_string(err) +
                                         "); give a SOFA file of convention SimpleFreeFieldHRIR in "
                                         "[output] hrtf, or install libmysofa's default set");
        return nullptr;
    }
    return set;
}

int HrtfSet::FilterLength() const { return impl_->filterLength; }

void HrtfSet::Filter(const Vec3& headDir, std::vector<float>& left, std::vector<float>& right,
                     double& delayLeftS, double& delayRightS) const {
    left.assign(impl_->filterLength, 0.0f);
    right.assign(impl_->filterLength, 0.0f);
    float dl = 0, dr = 0;
    std::lock_guard<std::mutex> lock(impl_->mutex);
    // SOFA / libmysofa axes: x front, y left, z up, as the AmbiX head frame.
    mysofa_getfilter_float(impl_->easy, static_cast<float>(headDir.x()), static_cast<float>(headDir.y()),
                           static_cast<float>(headDir.z()), left.data(), right.data(), &dl, &dr);
    delayLeftS = dl;
    delayRightS = dr;
}

std::shared_ptr<const std::vector<std::vector<std::complex<float>>>> HrtfSet::DecoderFilters(int fftSize,
                                                                                           double sampleRate) const {
    {
        std::lock_guard<std::mutex> lock(impl_->decoderMutex);
        for (const auto& [size, filters] : impl_->decoders)
            if (size == fftSize) return filters;
    }
    // Basic (sampling) first-order decoder on the cube's corners, a spherical 3-design
    // whose elevations (+-35.3 degrees) stay inside the range HRTF sets measure (MIT KEMAR
    // stops at -40 degrees; a virtual source straight below would get a wrong, lopsided
    // HRIR): virtual source k gets (1/8)(W + 3 d_k . (X, Y, Z)) (SN3D first order
    // reconstructs a plane wave as 1 + 3 cos(angle)); each goes through its HRIR pair.
    RealFft fft(fftSize);
    const int m = fft.Size(), bins = fft.BinCount();
    auto filters = std::make_shared<std::vector<std::vector<std::complex<float>>>>(
        8, std::vector<std::complex<float>>(bins, 0.0f));
    std::vector<float> buf(m);
    std::vector<std::complex<float>> h(bins);
    for (int sx : {-1, 1})
        for (int sy : {-1, 1})
            for (int sz : {-1, 1}) {
                const Vec3 d = Vec3(sx, sy, sz) / std::sqrt(3.0);
                // ACN order W, Y, Z, X; d in head coordinates (x front, y left, z up).
                const double share[4] = {1.0 / 8, 3.0 * d.y() / 8, 3.0 * d.z() / 8, 3.0 * d.x() / 8};
                std::vector<float> l, r;
                double dl = 0, dr = 0;
                Filter(d, l, r, dl, dr);
                for (int ear = 0; ear < 2; ++ear) {
                    std::fill(buf.begin(), buf.end(), 0.0f);
                    const std::vector<float>& hrir = ear == 0 ? l : r;
                    std::copy(hrir.begin(), hrir.end(), buf.begin());
                    fft.Forward(buf.data(), h.data());
                    const double delay = (ear == 0 ? dl : dr) * sampleRate;  // samples, as a phase ramp
                    for (int i = 0; i < bins; ++i) {
                        const double w = -2.0 * 3.14159265358979323846 * i * delay / m;
                        const std::complex<double> hd =
                            std::complex<double>(h[i]) * std::complex<double>(std::cos(w), std::sin(w));
                        for (int c = 0; c < 4; ++c)
                            (*filters)[ear * 4 + c][i] += std::complex<float>(share[c] * hd);
                    }
                }
            }
    std::lock_guard<std::mutex> lock(impl_->decoderMutex);
    for (const auto& [size, existing] : impl_->decoders)
        if (size == fftSize) return existing;  // another thread made it meanwhile (same values)
    if (impl_->decoders.size() >= 4) impl_->decoders.erase(impl_->decoders.begin());
    impl_->decoders.emplace_back(fftSize, filters);
    return filters;
}

namespace {

/* Head frame of a facing (internal frame): front, left, up; false for a vertical facing. */
bool HeadFrame(const Vec3& facing, Vec3& front, Vec3& left, Vec3& up) {
    const Vec3 worldUp(0, 1, 0);
    if (!facing.allFinite() || facing.norm() < 1e-9) return false;
    front = facing.normalized();
    up = worldUp - worldUp.dot(front) * front;
    if (up.norm() < 1e-9) return false;
    up.normalize();
    left = up.cross(front);
    return true;
}

}  // namespace

ImpulseResponse SynthesizeBinaural(const ReceiverPaths& specular, const ReceiverHistogram& tracer,
                                   const SynthesisContext& context, const Vec3& facing,
                                   const HrtfSet& hrtf, Diagnostics& diag) {
    ImpulseResponse ir;
    ir.channels = 2;
    ir.layout = "binaural-lr";
    ir.sampleRate = context.sampleRate;
    ir.referenceEnergy = GReferenceEnergy();
    Vec3 front, left, up;
    if (!HeadFrame(facing, front, left, up)) {
        diag.Error({"", 0, 0, "receiver " + std::to_string(context.receiver)},
                   "the seat's facing must be a finite, non-vertical direction for a binaural head frame");
        return ir;
    }
    // Late part: AmbiX without the specular paths, decoded below.
    const ImpulseResponse late = SynthesizeAmbixPart(specular, tracer, context, facing, false, diag);
    if (late.samples.empty()) return ir;
    const int nOut = static_cast<int>(late.FrameCount());
    ir.bandEnergyOfUnitDirac = late.bandEnergyOfUnitDirac;
    ir.directDelayS = late.directDelayS;
    const double fs = context.sampleRate;
    std::vector<std::vector<float>> ears(2, std::vector<float>(nOut, 0.0f));

    // Specular: each path through the HRIR pair of its head-frame direction, with the set's
    // broadband delays (SOFA Data.Delay) added to the path delay.
    auto headOf = [&](const Vec3& d) { return Vec3(d.dot(front), d.dot(left), d.dot(up)); };
    const size_t pathCount = specular.paths.size();
    std::vector<std::vector<float>> hrirs[2] = {std::vector<std::vector<float>>(pathCount),
                                                std::vector<std::vector<float>>(pathCount)};
    std::vector<double> hrirDelay[2] = {std::vector<double>(pathCount), std::vector<double>(pathCount)};
    for (size_t i = 0; i < pathCount; ++i)
        hrtf.Filter(headOf(specular.paths[i].arrivalFrom), hrirs[0][i], hrirs[1][i], hrirDelay[0][i], hrirDelay[1][i]);
    for (int ear = 0; ear < 2; ++ear) {
        AddSpecularKernelPart(specular, context, nOut, [&](const SpecularPath& p, std::vector<float>& k, double& extra) {
            const size_t i = static_cast<size_t>(&p - specular.paths.data());
            k = hrirs[ear][i];
            extra = hrirDelay[ear][i];
        }, ears[ear]);
    }

    // Late: the basic first-order decoder on the cube's corners (DecoderFilters). It is linear, so the eight HRIR pairs fold into one filter per AmbiX channel
    // and ear, A[ear][c] = sum_k (1/8) s_c(d_k) H_k,ear e^{-j w delay_k,ear} with s = (1, 3 d.y,
    // 3 d.z, 3 d.x): four FFTs of the channels and two inverse FFTs per seat.
    const int len = hrtf.FilterLength();
    RealFft& fft = ThreadRealFft(FastRealFftSize(nOut + len + static_cast<int>(0.01 * fs)));
    const int m = fft.Size(), bins = fft.BinCount();
    const auto decoder = hrtf.DecoderFilters(m, fs);
    std::vector<std::complex<float>> sum[2] = {std::vector<std::complex<float>>(bins, 0.0f),
                                               std::vector<std::complex<float>>(bins, 0.0f)};
    std::vector<float> buf(m);
    std::vector<std::complex<float>> sig(bins);
    for (int c = 0; c < 4; ++c) {
        std::fill(buf.begin(), buf.end(), 0.0f);
        for (int n = 0; n < nOut; ++n) buf[n] = late.samples[static_cast<size_t>(n) * 4 + c];
        fft.Forward(buf.data(), sig.data());
        for (int ear = 0; ear < 2; ++ear) {
            const std::vector<std::complex<float>>& a = (*decoder)[ear * 4 + c];
            for (int i = 0; i < bins; ++i) sum[ear][i] += sig[i] * a[i];
        }
    }
    for (int ear = 0; ear < 2; ++ear) {
        fft.Inverse(sum[ear].data(), buf.data());
        for (int n = 0; n < nOut; ++n) ears[ear][n] += buf[n];
    }
    ir.samples.resize(static_cast<size_t>(nOut) * 2);
    for (int n = 0; n < nOut; ++n) {
        ir.samples[2 * n] = ears[0][n];
        ir.samples[2 * n + 1] = ears[1][n];
    }
    return ir;
}

}  // namespace hallwright
