// The readers and the harmonic analysis in isolation (issue 10, item 5): the number parser
// against strtod on the forms scopes print, the text reader on a CSV held in memory, and the
// cycle-synchronous harmonics fed samples and boundaries directly. `lopside-bench` prints
// items per second; bench/speed-check times whole runs of `lopside measure` against numpy.
#include <benchmark/benchmark.h>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "lopside/capture_reader.hpp"
#include "lopside/harmonics.hpp"
#include "lopside/number_parse.hpp"
#include "lopside/reader_options.hpp"

namespace {

// A million cells as scopes print them: fixed notation with 2 to 7 decimals and exponent
// notation with 1 to 17 significant digits.
const std::vector<std::string>& cells() {
  static std::vector<std::string> c;
  if (c.empty()) {
    std::mt19937_64 rng(7);
    std::uniform_real_distribution<double> value(-1.0, 1.0);
    std::uniform_int_distribution<int> digits(1, 17), decimals(2, 7), exponent(-9, 3);
    char buf[64];
    for (int n = 0; n < 1000000; ++n) {
      const double v = value(rng) * std::pow(10.0, exponent(rng));
      if (n % 2 == 0) {
        std::snprintf(buf, sizeof buf, "%.*f", decimals(rng), v);
      } else {
        std::snprintf(buf, sizeof buf, "%.*e", digits(rng) - 1, v);
      }
      c.emplace_back(buf);
    }
  }
  return c;
}

void BM_ParseNumber(benchmark::State& state) {
  const auto& c = cells();
  for (auto _ : state) {
    double sum = 0;
    for (const std::string& s : c) sum += *lopside::parse_number(s);
    benchmark::DoNotOptimize(sum);
  }
  state.SetItemsProcessed(state.iterations() * static_cast<std::int64_t>(c.size()));
  state.SetLabel("items = numbers");
}

// The C library's conversion on the same cells, for scale.
void BM_Strtod(benchmark::State& state) {
  const auto& c = cells();
  for (auto _ : state) {
    double sum = 0;
    for (const std::string& s : c) sum += std::strtod(s.c_str(), nullptr);
    benchmark::DoNotOptimize(sum);
  }
  state.SetItemsProcessed(state.iterations() * static_cast<std::int64_t>(c.size()));
  state.SetLabel("items = numbers");
}

// Half a million rows "time,current,voltage" as a scope's CSV export, 1 MS/s.
const std::string& csv_text() {
  static std::string text;
  if (text.empty()) {
    std::ostringstream out;
    out << "time_s,current_A,voltage_V\n";
    char buf[96];
    for (int n = 0; n < 500000; ++n) {
      const double ph = 2 * M_PI * 20e3 * n * 1e-6;
      std::snprintf(buf, sizeof buf, "%.7f,%.5f,%.2f\n", n * 1e-6, 0.1 * std::sin(ph) + 0.002,
                    600 * std::sin(ph));
      out << buf;
    }
    text = out.str();
  }
  return text;
}

void BM_TextReader(benchmark::State& state) {
  const std::string& text = csv_text();
  lopside::ReaderOptions options;
  for (auto _ : state) {
    std::istringstream in(text);
    const auto source = lopside::open_text_capture(in, "memory.csv", options);
    lopside::SampleBlock block;
    double sum = 0;
    while (source->read(block, 1 << 16) > 0) sum += block.data[0];
    benchmark::DoNotOptimize(sum);
  }
  state.SetBytesProcessed(state.iterations() * static_cast<std::int64_t>(text.size()));
  state.SetItemsProcessed(state.iterations() * 500000);
  state.SetLabel("items = rows");
}

// Harmonics alone: 50 samples per cycle (20 kHz at 1 MS/s), boundaries given exactly.
void BM_Harmonics(benchmark::State& state) {
  constexpr std::size_t kSamples = 2000000;
  constexpr double kSpc = 50.0;
  std::vector<double> x(kSamples);
  for (std::size_t n = 0; n < kSamples; ++n) {
    const double ph = 2 * M_PI * static_cast<double>(n) / kSpc;
    x[n] = 0.1 * std::sin(ph) + 0.005 * std::sin(2 * ph) + 0.002;
  }
  for (auto _ : state) {
    lopside::HarmonicConfig config;
    config.sample_rate_hz = 1e6;
    lopside::HarmonicAnalyzer h(config);
    double next = 0.25;
    for (std::size_t n = 0; n < kSamples; ++n) {
      if (static_cast<double>(n) > next) {
        h.on_boundary(next);
        next += kSpc;
      }
      h.on_sample(n, x[n]);
    }
    benchmark::DoNotOptimize(h.finish().orders.size());
  }
  state.SetItemsProcessed(state.iterations() * static_cast<std::int64_t>(kSamples));
  state.SetLabel("items = samples");
}

}  // namespace

BENCHMARK(BM_ParseNumber)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_Strtod)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_TextReader)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_Harmonics)->Unit(benchmark::kMillisecond);
