#pragma once
// Thin RAII wrapper around kissfft's real FFT (float), private to the engine and its tests.
#include <complex>

namespace hallwright {

/* Smallest even size >= n whose factors are 2, 3 and 5 only (fast for kissfft). */
int FastRealFftSize(int n);

/* Real FFT of a fixed even size. Not shareable between threads (kissfft keeps scratch). */
class RealFft {
  public:
    explicit RealFft(int size);
    ~RealFft();
    RealFft(const RealFft&) = delete;
    RealFft& operator=(const RealFft&) = delete;

    int Size() const { return size_; }
    int BinCount() const { return size_ / 2 + 1; }
    /* in: Size() samples; out: BinCount() bins (unnormalised, e^{-j w n}). */
    void Forward(const float* in, std::complex<float>* out);
    /* in: BinCount() bins; out: Size() samples, scaled by 1/Size() (true inverse). */
    void Inverse(const std::complex<float>* in, float* out);

  private:
    int size_;
    void* forward_ = nullptr;
    void* inverse_ = nullptr;
};

/* This thread's plan of the given size, made on first use and kept (plans cost as much as a
   few transforms to make). Valid until the thread ends; never share it with another thread. */
RealFft& ThreadRealFft(int size);

}  // namespace hallwright
