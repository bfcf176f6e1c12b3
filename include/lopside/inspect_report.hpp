#pragma once
/// \file
/// What `lopside inspect` found in a capture, and its two renderings: a text summary for the
/// bench and a JSON document for scripts.

#include <cstdint>
#include <iosfwd>
#include <optional>
#include <string>
#include <vector>

#include "lopside/channel_stats.hpp"
#include "lopside/sample_source.hpp"

#include "lopside/provenance.hpp"

namespace lopside {

/// Schema name written into the JSON; bump the number when a key changes meaning or goes away.
inline constexpr const char* kInspectSchema = "lopside.inspect/1";

struct InspectResult {
  CaptureInfo info;                      ///< as the reader states it after the last block
  std::uint64_t frames = 0;              ///< frames actually read
  std::vector<ChannelSummary> channels;  ///< one per entry of info.channels, same order
  std::vector<std::string> warnings;     ///< the reader's, then those of the inspection
  Provenance provenance;                 ///< where the result came from

  /// Length of the record [s]: frames × sampling interval (each sample stands for one
  /// interval), or nullopt when the sample rate is unknown.
  std::optional<double> duration_s() const;
};

/// A summary a technician reads at a glance: file, format, rate, length, one table row per
/// channel (extremes, mean, share of clipped samples), warnings, roles. Ends with a newline.
void write_inspect_text(std::ostream& out, const InspectResult& result);

/// The same as one JSON object (schema kInspectSchema), SI units throughout:
/// schema, path, format, detail, sample_rate_hz, samples, duration_s, start_time_s,
/// channels[{index, name, unit, unit_is_si, role, min, max, mean, clipped_share,
/// clipped_max_share, clipped_min_share, clipped_max_crests, clipped_min_crests,
/// full_scale_min, full_scale_max}], metadata, warnings[]. Unknown values are null. The clipped
/// shares count the samples in runs that ChannelSummary calls clipped (the clipping rule, or
/// the integer full scale); full_scale_min/max are ChannelInfo's, null for float and text.
void write_inspect_json(std::ostream& out, const InspectResult& result);

}  // namespace lopside
