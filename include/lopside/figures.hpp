#pragma once
/// \file
/// The figures of one measurement by the names `measure --json` gives them, with their expanded
/// uncertainty: what a limits file names and what a lot records. A nested key is written with
/// a dot ("voltage.rms_v").

#include <optional>
#include <string>
#include <vector>

#include "lopside/pipeline.hpp"

namespace lopside {

struct NamedFigure {
  std::string name;           ///< the JSON key, e.g. "dc_to_rms", "voltage.rms_v"
  double value = 0;           ///< in the JSON's unit (the key's suffix; ratios are plain numbers)
  std::optional<double> u95;  ///< expanded uncertainty (95 %), unset where measure gives none
};

/// Every figure a limit may name, in the order of measure's JSON.
const std::vector<std::string>& limitable_figures();

/// The figures one measurement has (a capture without a voltage channel has no "voltage.*",
/// one without harmonics no "thd"), in the order of limitable_figures(); values and u95 are
/// those measure's JSON carries.
std::vector<NamedFigure> measure_figures(const MeasureResult& result);

}  // namespace lopside
