#pragma once
/// \file
/// A progress bar on standard error for long captures, drawn only when standard error is a
/// terminal (so logs and pipes stay clean).

#include <chrono>
#include <cstdint>

namespace lopside::cli {

class ProgressBar {
 public:
  ProgressBar();
  ~ProgressBar();
  /// `share` in [0, 1], or negative when unknown (then the frame count is shown).
  void update(double share, std::uint64_t frames);
  /// Clears the bar's line.
  void done();

 private:
  bool enabled_ = false;
  bool drawn_ = false;
  std::chrono::steady_clock::time_point started_, last_;
};

}  // namespace lopside::cli
