#include "lopside/memory_source.hpp"

#include <algorithm>
#include <stdexcept>

namespace lopside {

MemorySource::MemorySource(CaptureInfo info, std::vector<double> interleaved)
    : info_(std::move(info)), data_(std::move(interleaved)) {
  channels_ = std::max<std::size_t>(info_.channels.size(), 1);
  if (data_.size() % channels_ != 0) {
    throw std::invalid_argument("MemorySource: the values are not a whole number of frames");
  }
  info_.frames = data_.size() / channels_;
}

std::size_t MemorySource::read(SampleBlock& block, std::size_t max_frames) {
  const std::size_t frames = data_.size() / channels_;
  const std::size_t n = std::min(max_frames, frames - next_frame_);
  block.channels = channels_;
  block.frames = n;
  const auto first = data_.begin() + static_cast<std::ptrdiff_t>(next_frame_ * channels_);
  block.data.assign(first, first + static_cast<std::ptrdiff_t>(n * channels_));
  next_frame_ += n;
  return n;
}

double MemorySource::progress() const {
  const std::size_t frames = data_.size() / channels_;
  return frames == 0 ? 1.0 : static_cast<double>(next_frame_) / static_cast<double>(frames);
}

}  // namespace lopside
