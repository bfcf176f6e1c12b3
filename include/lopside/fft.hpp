#pragma once
/// \file
/// The one seam to FFTW: a real-to-complex transform of a fixed length that owns its plan
/// (planned once, reused for every block). FFTW's header is included in src/core/fft.cpp only.

#include <complex>
#include <cstddef>
#include <memory>

namespace lopside {

class RealFft {
 public:
  /// Plans a forward transform of `length` real samples (length ≥ 2) with FFTW_ESTIMATE, so
  /// planning costs no trial runs and the result does not depend on the machine's timing.
  explicit RealFft(std::size_t length);
  ~RealFft();
  RealFft(const RealFft&) = delete;
  RealFft& operator=(const RealFft&) = delete;

  std::size_t length() const { return length_; }
  /// The input buffer to fill: length() values.
  double* input() { return in_; }
  /// Runs the transform; bins 0…length()/2 of the unnormalised DFT X[k] = Σ x[n]·e^(−2πikn/N).
  const std::complex<double>* forward();

 private:
  std::size_t length_;
  double* in_ = nullptr;
  std::complex<double>* out_ = nullptr;
  struct Plan;
  std::unique_ptr<Plan> plan_;
};

}  // namespace lopside
