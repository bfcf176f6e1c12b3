// The named figures of a measurement (figures.hpp). The names and sources mirror the JSON of
// src/report/measure_report.cpp key for key; tests/figures_test.cpp holds the two together
// and holds measure_figures() to limitable_figures().
#include "lopside/figures.hpp"

#include <cmath>

namespace lopside {

const std::vector<std::string>& limitable_figures() {
  static const std::vector<std::string> names = {
      "fundamental_hz",
      "cycle_count",
      "dc_offset_a",
      "rms_a",
      "ac_rms_a",
      "dc_to_rms",
      "dc_to_ac_rms",
      "charge_positive_c",
      "charge_negative_c",
      "charge_asymmetry",
      "positive_share",
      "peak_positive_a",
      "peak_negative_a",
      "voltage.mean_v",
      "voltage.rms_v",
      "voltage.peak_positive_v",
      "voltage.peak_negative_v",
      "voltage.positive_share",
      "voltage.power_w",
      "voltage.energy_positive_j",
      "voltage.energy_negative_j",
      "voltage.burning_voltage_positive_v",
      "voltage.burning_voltage_negative_v",
      "crest_factor",
      "form_factor",
      "thd",
      "thd_with_dc",
      "even_harmonic_share",
      "dc_to_fundamental",
  };
  return names;
}

std::vector<NamedFigure> measure_figures(const MeasureResult& result) {
  std::vector<NamedFigure> out;
  const CycleSummary& s = result.summary;
  // A figure the JSON gives as null (not finite: no burning voltage found) is absent here.
  const auto estimate = [&out](const char* name, const Estimate& e) {
    if (std::isfinite(e.value)) out.push_back({name, e.value, e.u95});
  };
  const auto plain = [&out](const char* name, double v) {
    if (std::isfinite(v)) out.push_back({name, v, std::nullopt});
  };
  estimate("fundamental_hz", s.fundamental_hz);
  plain("cycle_count", static_cast<double>(s.cycles));
  estimate("dc_offset_a", s.dc_offset_a);
  estimate("rms_a", s.rms_a);
  estimate("ac_rms_a", s.ac_rms_a);
  estimate("dc_to_rms", s.dc_to_rms);
  estimate("dc_to_ac_rms", s.dc_to_ac_rms);
  estimate("charge_positive_c", s.charge_positive_c);
  estimate("charge_negative_c", s.charge_negative_c);
  estimate("charge_asymmetry", s.charge_asymmetry);
  estimate("positive_share", s.positive_share);
  estimate("peak_positive_a", s.peak_positive_a);
  estimate("peak_negative_a", s.peak_negative_a);
  if (s.has_voltage) {
    estimate("voltage.mean_v", s.voltage_mean_v);
    estimate("voltage.rms_v", s.voltage_rms_v);
    estimate("voltage.peak_positive_v", s.voltage_peak_positive_v);
    estimate("voltage.peak_negative_v", s.voltage_peak_negative_v);
    estimate("voltage.positive_share", s.voltage_positive_share);
    estimate("voltage.power_w", s.power_w);
    estimate("voltage.energy_positive_j", s.energy_positive_j);
    estimate("voltage.energy_negative_j", s.energy_negative_j);
    estimate("voltage.burning_voltage_positive_v", s.burning_voltage_positive_v);
    estimate("voltage.burning_voltage_negative_v", s.burning_voltage_negative_v);
  }
  plain("crest_factor", s.crest_factor);
  plain("form_factor", s.form_factor);
  if (s.harmonics) {
    plain("thd", s.harmonics->thd);
    plain("thd_with_dc", s.harmonics->thd_with_dc);
    plain("even_harmonic_share", s.harmonics->even_harmonic_share);
    plain("dc_to_fundamental", s.harmonics->dc_to_fundamental);
  }
  return out;
}

}  // namespace lopside
