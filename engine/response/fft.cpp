// kissfft real-FFT wrapper.
#include "response/fft.h"

#include <algorithm>
#include <memory>
#include <vector>

#include <kiss_fftr.h>

#include "hallwright/diagnostics.h"

namespace hallwright {

int FastRealFftSize(int n) {
    if (n < 2) return 2;
    for (int m = n + (n & 1);; m += 2) {
        int r = m;
        for (int p : {2, 3, 5})
            while (r % p == 0) r /= p;
        if (r == 1) return m;
    }
}

RealFft::RealFft(int size) : size_(size) {
    HW_CHECK(size >= 2 && size % 2 == 0, "real FFT size must be even, got " + std::to_string(size));
    forward_ = kiss_fftr_alloc(size, 0, nullptr, nullptr);
    inverse_ = kiss_fftr_alloc(size, 1, nullptr, nullptr);
    HW_CHECK(forward_ && inverse_, "kissfft could not allocate a plan of size " + std::to_string(size));
}

RealFft::~RealFft() {
    kiss_fftr_free(forward_);
    kiss_fftr_free(inverse_);
}

void RealFft::Forward(const float* in, std::complex<float>* out) {
    static_assert(sizeof(kiss_fft_cpx) == sizeof(std::complex<float>));
    kiss_fftr(static_cast<kiss_fftr_cfg>(forward_), in, reinterpret_cast<kiss_fft_cpx*>(out));
}

void RealFft::Inverse(const std::complex<float>* in, float* out) {
    // kissfft's inverse is unnormalised.
    kiss_fftri(static_cast<kiss_fftr_cfg>(inverse_), reinterpret_cast<const kiss_fft_cpx*>(in), out);
    const float scale = 1.0f / static_cast<float>(size_);
    for (int i = 0; i < size_; ++i) out[i] *= scale;
}

RealFft& ThreadRealFft(int size) {
    // A run uses a handful of sizes (the late-part grids, the specular grids); a bounded list,
    // most recently used last, keeps memory in check if sizes keep changing. A caller may
    // hold up to kKept - 1 plans at once (moving a unique_ptr leaves its plan in place).
    constexpr size_t kKept = 32;
    thread_local std::vector<std::unique_ptr<RealFft>> plans;
    for (size_t i = 0; i < plans.size(); ++i)
        if (plans[i]->Size() == size) {
            std::rotate(plans.begin() + static_cast<long>(i), plans.begin() + static_cast<long>(i) + 1, plans.end());
            return *plans.back();
        }
    if (plans.size() >= kKept) plans.erase(plans.begin());
    plans.push_back(std::make_unique<RealFft>(size));
    return *plans.back();
}

}  // namespace hallwright
