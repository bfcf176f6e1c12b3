#include "lopside/fft.hpp"

#include <fftw3.h>

#include <complex>
#include <mutex>
#include <new>
#include <stdexcept>

namespace lopside {

struct RealFft::Plan {
  fftw_plan plan = nullptr;
};

namespace {

// FFTW's planner is not thread-safe: only fftw_execute may be called from several threads at
// once (FFTW 3 manual, 5.4 "Thread safety"). Plans are made and destroyed under this lock, so
// captures measured at once (`lot --jobs`) and the harmonics' own thread never plan together.
std::mutex& planner_mutex() {
  static std::mutex m;
  return m;
}

}  // namespace

RealFft::RealFft(std::size_t length) : length_(length), plan_(std::make_unique<Plan>()) {
  if (length < 2) throw std::invalid_argument("RealFft: length must be at least 2");
  in_ = static_cast<double*>(fftw_malloc(sizeof(double) * length));
  // std::complex<double> is layout-compatible with fftw_complex (C++ [complex.numbers] p4; the
  // FFTW manual, "Complex numbers").
  out_ = static_cast<std::complex<double>*>(fftw_malloc(sizeof(fftw_complex) * (length / 2 + 1)));
  if (!in_ || !out_) {
    fftw_free(in_);
    fftw_free(out_);
    throw std::bad_alloc();
  }
  {
    const std::lock_guard<std::mutex> lock(planner_mutex());
    plan_->plan = fftw_plan_dft_r2c_1d(static_cast<int>(length), in_,
                                       reinterpret_cast<fftw_complex*>(out_), FFTW_ESTIMATE);
  }
  if (!plan_->plan) {
    fftw_free(in_);
    fftw_free(out_);
    throw std::runtime_error("FFTW could not plan the transform");
  }
}

RealFft::~RealFft() {
  if (plan_ && plan_->plan) {
    const std::lock_guard<std::mutex> lock(planner_mutex());
    fftw_destroy_plan(plan_->plan);
  }
  fftw_free(in_);
  fftw_free(out_);
}

const std::complex<double>* RealFft::forward() {
  fftw_execute(plan_->plan);
  return out_;
}

}  // namespace lopside
