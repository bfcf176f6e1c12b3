#include "progress.hpp"

#include <unistd.h>

#include <cstdio>

namespace lopside::cli {

ProgressBar::ProgressBar()
    : enabled_(::isatty(STDERR_FILENO) == 1),
      started_(std::chrono::steady_clock::now()),
      last_(started_) {}

ProgressBar::~ProgressBar() {
  done();
}

void ProgressBar::update(double share, std::uint64_t frames) {
  if (!enabled_) return;
  const auto now = std::chrono::steady_clock::now();
  // Short reads never show a bar; long ones redraw five times a second.
  if (now - started_ < std::chrono::milliseconds(700) ||
      now - last_ < std::chrono::milliseconds(200))
    return;
  last_ = now;
  drawn_ = true;
  if (share >= 0) {
    constexpr int kWidth = 30;
    const int filled = static_cast<int>(share * kWidth + 0.5);
    std::fprintf(stderr, "\r  reading [%.*s%*s] %3.0f %%", filled, "##############################",
                 kWidth - filled, "", share * 100);
  } else {
    std::fprintf(stderr, "\r  reading: %llu samples", static_cast<unsigned long long>(frames));
  }
  std::fflush(stderr);
}

void ProgressBar::done() {
  if (drawn_) {
    std::fprintf(stderr, "\r%60s\r", "");
    std::fflush(stderr);
    drawn_ = false;
  }
}

}  // namespace lopside::cli
