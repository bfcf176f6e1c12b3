#include "lopside/probe.hpp"

#include <cmath>
#include <stdexcept>
#include <utility>

namespace lopside {

const char* to_string(ProbeKind kind) noexcept {
  switch (kind) {
    case ProbeKind::shunt:
      return "shunt";
    case ProbeKind::hall:
      return "hall";
    case ProbeKind::ct:
      return "ct";
    case ProbeKind::rogowski:
      return "rogowski";
    case ProbeKind::ac_coupled:
      return "ac-coupled";
  }
  return "shunt";
}

std::optional<ProbeKind> probe_kind_from(std::string_view name) noexcept {
  for (const ProbeKind k : {ProbeKind::shunt, ProbeKind::hall, ProbeKind::ct, ProbeKind::rogowski,
                            ProbeKind::ac_coupled}) {
    if (name == to_string(k)) return k;
  }
  return std::nullopt;
}

bool passes_dc(ProbeKind kind) noexcept {
  return kind == ProbeKind::shunt || kind == ProbeKind::hall;
}

LeadIn find_lead_in(SampleSource& source, std::size_t channel) {
  // The record-breaking |values| in order: (frame, |value|). The first frame above 2 % of the
  // final peak is itself a record-breaker (every frame before it is below the bar, so below
  // it), and the first record-breaker above the bar is that frame.
  std::vector<std::pair<std::uint64_t, double>> records;
  double running = -1;
  std::uint64_t frame = 0;
  SampleBlock block;
  // Sums over the frames before each record-breaker would be needed for the lead-in's mean; the
  // lead-in is short, so the first kKeep frames are kept whole instead and the mean taken at
  // the end from them (a lead-in longer than that is averaged over its first kKeep frames).
  constexpr std::size_t kKeep = std::size_t{1} << 20;
  std::vector<double> head;
  while (source.read(block, 1 << 16) > 0) {
    for (std::size_t f = 0; f < block.frames; ++f, ++frame) {
      const double v = block.value(f, channel);
      if (!std::isfinite(v)) continue;
      if (head.size() < kKeep) head.push_back(v);
      const double a = std::fabs(v);
      if (a > running) {
        running = a;
        records.emplace_back(frame, a);
      }
    }
  }
  LeadIn lead;
  lead.total_frames = frame;
  lead.peak = running > 0 ? running : 0.0;
  lead.frames = frame;
  for (const auto& [at, value] : records) {
    if (value > kQuietShare * lead.peak) {
      lead.frames = at;
      break;
    }
  }
  const std::size_t n = std::min<std::size_t>(head.size(), lead.frames);
  if (n > 0) {
    double sum = 0;
    for (std::size_t k = 0; k < n; ++k) sum += head[k];
    lead.mean = sum / static_cast<double>(n);
    double ss = 0;
    for (std::size_t k = 0; k < n; ++k) ss += (head[k] - lead.mean) * (head[k] - lead.mean);
    lead.sd = n > 1 ? std::sqrt(ss / static_cast<double>(n - 1)) : 0.0;
  }
  return lead;
}

bool ProbeCorrectedSource::corrects(const ProbeSettings& p) {
  switch (p.kind) {
    case ProbeKind::ct:
    case ProbeKind::ac_coupled:
      return p.tau_s.has_value();
    case ProbeKind::rogowski:
      return p.rogowski_v_s_per_a.has_value();
    default:
      return false;
  }
}

ProbeCorrectedSource::ProbeCorrectedSource(std::unique_ptr<SampleSource> inner,
                                           std::size_t current_channel, const ProbeSettings& probe,
                                           const LeadIn& lead_in)
    : inner_(std::move(inner)), channel_(current_channel), probe_(probe) {
  if (!corrects(probe)) throw std::invalid_argument("ProbeCorrectedSource: nothing to correct");
  if (probe.tau_s && !(*probe.tau_s > 0)) throw std::invalid_argument("probe tau must be > 0");
  if (probe.rogowski_v_s_per_a && !(*probe.rogowski_v_s_per_a > 0))
    throw std::invalid_argument("Rogowski sensitivity must be > 0");
  dt_ = 1.0 / inner_->info().sample_rate_hz;
  // The coil's output over the quiet lead-in is the integrator's offset (di/dt = 0 there).
  if (probe.kind == ProbeKind::rogowski) offset_ = lead_in.mean;
}

const CaptureInfo& ProbeCorrectedSource::info() const {
  info_ = inner_->info();
  if (channel_ < info_.channels.size()) {
    ChannelInfo& c = info_.channels[channel_];
    // The corrected current is no longer bounded by the recorder's range, and a Rogowski
    // coil's volts become amperes.
    c.full_scale_low.reset();
    c.full_scale_high.reset();
    if (probe_.kind == ProbeKind::rogowski) {
      c.unit.assign(1, 'A');  // (not = "A": g++ 12 warns falsely, -Wrestrict)
      c.unit_text.clear();
    }
  }
  return info_;
}

std::size_t ProbeCorrectedSource::read(SampleBlock& block, std::size_t max_frames) {
  const std::size_t n = inner_->read(block, max_frames);
  // Not-finite samples pass as they are (the engine holds and counts them); the integral
  // carries on from the last finite sample.
  for (std::size_t f = 0; f < n; ++f) {
    double& v = block.data[f * block.channels + channel_];
    if (!std::isfinite(v)) continue;
    const double y = v - offset_;
    integral_ += first_ ? 0.0 : 0.5 * (previous_ + y) * dt_;
    first_ = false;
    previous_ = y;
    if (probe_.kind == ProbeKind::rogowski) {
      v = integral_ / *probe_.rogowski_v_s_per_a;  // i = (1/M)·∫(v − b) dt
    } else {
      v = y + integral_ / *probe_.tau_s;  // x = y + (1/τ)·∫y dt
    }
  }
  return n;
}

}  // namespace lopside
