// Throughput of the cycle engine in samples per second, on blocks already in memory (the
// readers' speed is measured separately), so the figure is the engine's own.
#include <benchmark/benchmark.h>

#include <memory>
#include <vector>

#include "lopside/cycle_engine.hpp"
#include "lopside/memory_source.hpp"
#include "lopside/pipeline.hpp"
#include "synth/synth.hpp"

namespace {

// 0.2 s of a 40 kHz supply at 10 MS/s (250 samples per cycle), current and voltage, made once;
// or (`few`) 2 s of a 20 kHz supply at 1 MS/s, 50 samples per cycle, as bench/speed-check's
// captures: there the crossings and the current's zeros are found on the band-limited
// reconstruction, the engine's costliest events.
const std::vector<double>& capture(bool with_voltage, bool few = false) {
  static std::vector<double> frames[4];
  std::vector<double>& f = frames[(with_voltage ? 1 : 0) + (few ? 2 : 0)];
  if (f.empty()) {
    lopside::synth::CaptureSpec s;
    s.timebase.sample_rate_hz = few ? 1e6 : 10e6;
    s.timebase.duration_s = few ? 2.0 : 0.2;
    s.timebase.start_frequency_hz = s.timebase.end_frequency_hz = few ? 20e3 : 40e3;
    s.current.peak = 0.02;
    s.current.dc = 0.001;
    s.noise_rms_a = 0.0002;
    if (with_voltage) {
      s.voltage = lopside::synth::Waveform{};
      s.voltage->peak = 1500;
    }
    lopside::synth::Generator g(s);
    std::vector<double> block;
    while (g.read(block, 1 << 16) > 0) f.insert(f.end(), block.begin(), block.end());
  }
  return f;
}

void run(benchmark::State& state, bool with_voltage, bool with_harmonics = false,
         bool few = false) {
  const std::vector<double>& data = capture(with_voltage, few);
  const std::size_t channels = with_voltage ? 2 : 1;
  const std::size_t frames = data.size() / channels;
  constexpr std::size_t kBlock = 1 << 16;
  // The 50-per-cycle capture holds 40 000 whole cycles and is fed five times over (10 M
  // frames), so that the engine's one-off look-ahead (its first 2^20 frames) weighs as little
  // as on a long capture.
  const std::size_t repeats = few ? 5 : 1;
  for (auto _ : state) {
    lopside::CycleConfig config;
    config.sample_rate_hz = few ? 1e6 : 10e6;
    if (with_voltage) config.voltage_channel = 1;
    if (with_harmonics) config.harmonics = lopside::HarmonicConfig{};
    lopside::CycleEngine engine(config);
    lopside::SampleBlock block;
    block.channels = channels;
    for (std::size_t r = 0; r < repeats; ++r) {
      for (std::size_t at = 0; at < frames; at += kBlock) {
        const std::size_t n = std::min(kBlock, frames - at);
        block.data.assign(data.begin() + static_cast<std::ptrdiff_t>(at * channels),
                          data.begin() + static_cast<std::ptrdiff_t>((at + n) * channels));
        block.frames = n;
        engine.consume(block);
      }
    }
    benchmark::DoNotOptimize(engine.finish().dc_offset_a.value);
  }
  state.SetItemsProcessed(state.iterations() * static_cast<std::int64_t>(frames * repeats));
  state.SetLabel("items = samples (frames)");
}

void BM_CycleEngineCurrentOnly(benchmark::State& state) {
  run(state, false);
}
void BM_CycleEngineCurrentAndVoltage(benchmark::State& state) {
  run(state, true);
}
void BM_CycleEngine50PerCycleCurrentOnly(benchmark::State& state) {
  run(state, false, false, true);
}
void BM_CycleEngine50PerCycleCurrentAndVoltage(benchmark::State& state) {
  run(state, true, false, true);
}
void BM_CycleEngine50PerCycleWithHarmonics(benchmark::State& state) {
  run(state, false, true, true);
}
// The same with the cycle-synchronous harmonics (10-cycle blocks, orders 0…40), as `measure`
// runs by default: the issue allows at most twice the time of the engine alone.
void BM_CycleEngineWithHarmonics(benchmark::State& state) {
  run(state, true, true);
}

// The whole measurement as `measure` runs it, by the library call (engine with harmonics, time
// course, diagnosis) on the same capture held in memory: what the pipeline adds to the engine.
void BM_MeasurePipeline(benchmark::State& state) {
  const std::vector<double>& data = capture(true);
  lopside::CaptureInfo info;
  info.path = "memory";
  info.sample_rate_hz = 10e6;
  for (std::size_t c = 0; c < 2; ++c) {
    lopside::ChannelInfo ch;
    ch.index = c + 1;
    ch.name = c == 0 ? "current" : "voltage";
    ch.unit = c == 0 ? "A" : "V";
    ch.role = c == 0 ? lopside::ChannelRole::current : lopside::ChannelRole::voltage;
    info.channels.push_back(ch);
  }
  lopside::MeasureSettings settings;
  settings.capture_name = "memory";
  for (auto _ : state) {
    const lopside::MeasureResult r = lopside::measure_capture(
        [&] { return std::make_unique<lopside::MemorySource>(info, data); }, settings);
    benchmark::DoNotOptimize(r.summary.dc_offset_a.value);
  }
  state.SetItemsProcessed(state.iterations() * static_cast<std::int64_t>(data.size() / 2));
  state.SetLabel("items = samples (frames)");
}

}  // namespace

BENCHMARK(BM_MeasurePipeline)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_CycleEngineCurrentOnly)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_CycleEngineCurrentAndVoltage)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_CycleEngineWithHarmonics)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_CycleEngine50PerCycleCurrentOnly)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_CycleEngine50PerCycleCurrentAndVoltage)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_CycleEngine50PerCycleWithHarmonics)->Unit(benchmark::kMillisecond);
