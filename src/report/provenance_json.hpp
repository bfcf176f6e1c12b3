#pragma once
// The provenance block every JSON document carries (lopside/provenance.hpp), formatted once.
#include "lopside/provenance.hpp"
#include "report_support.hpp"

namespace lopside::report_detail {

inline json provenance_json(const Provenance& p) {
  json j;
  j["tool"] = p.tool;
  j["tool_version"] = p.tool_version;
  j["command"] = p.command;
  j["analysed_utc"] = p.analysed_utc;
  json inputs = json::array();
  for (const InputIdentity& in : p.inputs) {
    json ji;
    ji["role"] = in.role;
    ji["path"] = in.path;
    ji["bytes"] = in.bytes ? json(*in.bytes) : json(nullptr);
    ji["sha256"] = in.sha256.empty() ? json(nullptr) : json(in.sha256);
    if (!in.not_hashed.empty()) ji["not_hashed"] = in.not_hashed;
    inputs.push_back(std::move(ji));
  }
  j["inputs"] = std::move(inputs);
  json options = json::object();
  for (const GivenOption& o : p.options)
    options[o.name] = o.values.size() == 1 ? json(o.values.front()) : json(o.values);
  j["options_given"] = std::move(options);
  json settings = json::object();
  for (const auto& [name, value] : p.settings) {
    if (const double* d = std::get_if<double>(&value))
      settings[name] = std::isfinite(*d) ? json(*d) : json(nullptr);
    else if (const bool* b = std::get_if<bool>(&value))
      settings[name] = *b;
    else
      settings[name] = std::get<std::string>(value);
  }
  j["settings"] = std::move(settings);
  j["settings_sha256"] = p.settings_sha256.empty() ? json(nullptr) : json(p.settings_sha256);
  return j;
}

}  // namespace lopside::report_detail
