#pragma once
/// \file
/// A capture held in memory as a SampleSource: interleaved frames handed out in blocks as a
/// file's reader would, for library callers that already hold their samples (and for the
/// benchmarks and tests of the pipeline).

#include <cstddef>
#include <string>
#include <vector>

#include "lopside/sample_source.hpp"

namespace lopside {

class MemorySource : public SampleSource {
 public:
  /// `interleaved`: frames of info.channels.size() values each (SI units); info.frames is set
  /// from it. Throws std::invalid_argument when the size is not a whole number of frames.
  MemorySource(CaptureInfo info, std::vector<double> interleaved);
  const CaptureInfo& info() const override { return info_; }
  std::size_t read(SampleBlock& block, std::size_t max_frames) override;
  const std::vector<std::string>& warnings() const override { return warnings_; }
  double progress() const override;

 private:
  CaptureInfo info_;
  std::vector<double> data_;
  std::size_t channels_ = 1;
  std::size_t next_frame_ = 0;
  std::vector<std::string> warnings_;
};

}  // namespace lopside
