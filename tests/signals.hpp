#pragma once
// Shared helpers of the accuracy tests: run a synthetic capture (known truth) through the
// cycle engine in blocks, as the CLI does.
#include <cmath>
#include <vector>

#include "lopside/cycle_engine.hpp"
#include "synth/synth.hpp"

namespace lopside::test {

struct EngineRun {
  CycleSummary summary;
  std::vector<CycleRecord> cycles;
};

inline EngineRun run_engine(const synth::CaptureSpec& spec, CycleConfig config = {},
                            std::size_t block_frames = 4096) {
  synth::Generator generator(spec);
  config.sample_rate_hz = spec.timebase.sample_rate_hz;
  config.start_time_s = spec.timebase.start_time_s;
  config.current_channel = 0;
  if (spec.voltage) config.voltage_channel = 1;
  EngineRun run;
  CycleEngine engine(config, [&run](const CycleRecord& r) { run.cycles.push_back(r); });
  SampleBlock block;
  block.channels = generator.channels();
  while (const std::size_t n = generator.read(block.data, block_frames)) {
    block.frames = n;
    engine.consume(block);
  }
  run.summary = engine.finish();
  return run;
}

/// A sine current of `peak` amperes at `frequency_hz`, sampled at `rate_hz` for `duration_s`.
inline synth::CaptureSpec sine_spec(double frequency_hz, double peak, double rate_hz,
                                    double duration_s) {
  synth::CaptureSpec s;
  s.timebase.sample_rate_hz = rate_hz;
  s.timebase.duration_s = duration_s;
  s.timebase.start_frequency_hz = frequency_hz;
  s.timebase.end_frequency_hz = frequency_hz;
  s.current.shape = synth::Shape::sine;
  s.current.peak = peak;
  return s;
}

/// Whole cycles between rising crossings at phase `crossing_phase` [cycles] of a capture that
/// starts at phase `start_phase` [cycles] and lasts `cycles_in_capture` periods: crossings at
/// k + crossing_phase − start_phase inside (0, cycles_in_capture), less one.
inline long expected_whole_cycles(double cycles_in_capture, double start_phase,
                                  double crossing_phase) {
  long crossings = 0;
  for (long k = -2; k < static_cast<long>(cycles_in_capture) + 3; ++k) {
    double p = static_cast<double>(k) + crossing_phase - start_phase;
    if (p > 0 && p < cycles_in_capture) ++crossings;
  }
  return crossings - 1;
}

}  // namespace lopside::test
