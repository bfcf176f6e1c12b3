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

// One second of a 40 kHz supply at 10 MS/s, current and voltage, made once.
const std::vector<double>& capture(bool with_voltage) {
  static std::vector<double> frames[2];
  std::vector<double>& f = frames[with_voltage ? 1 : 0];
  if (f.empty()) {
    lopside::synth::CaptureSpec s;
    s.timebase.sample_rate_hz = 10e6;
    s.timebase.duration_s = 0.2;
    s.timebase.start_frequency_hz = s.timebase.end_frequency_hz = 40e3;
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

void run(benchmark::State& state, bool with_voltage, bool with_harmonics = false) {
  const std::vector<double>& data = capture(with_voltage);
  const std::size_t channels = with_voltage ? 2 : 1;
  const std::size_t frames = data.size() / channels;
  constexpr std::size_t kBlock = 1 << 16;
  for (auto _ : state) {
    lopside::CycleConfig config;
    config.sample_rate_hz = 10e6;
    if (with_voltage) config.voltage_channel = 1;
    if (with_harmonics) config.harmonics = lopside::HarmonicConfig{};
    lopside::CycleEngine engine(config);
    lopside::SampleBlock block;
    block.channels = channels;
    for (std::size_t at = 0; at < frames; at += kBlock) {
      const std::size_t n = std::min(kBlock, frames - at);
      block.data.assign(data.begin() + static_cast<std::ptrdiff_t>(at * channels),
                        data.begin() + static_cast<std::ptrdiff_t>((at + n) * channels));
      block.frames = n;
      engine.consume(block);
    }
    benchmark::DoNotOptimize(engine.finish().dc_offset_a.value);
  }
  state.SetItemsProcessed(state.iterations() * static_cast<std::int64_t>(frames));
  state.SetLabel("items = samples (frames)");
}

void BM_CycleEngineCurrentOnly(benchmark::State& state) {
  run(state, false);
}
void BM_CycleEngineCurrentAndVoltage(benchmark::State& state) {
  run(state, true);
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
