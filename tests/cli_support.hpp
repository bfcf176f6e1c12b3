#pragma once
// Running the built `lopside` binary from a test as a user would: a temporary directory per
// test, the binary started through the shell, exit status and both streams captured.
#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <vector>

namespace lopside::test {

namespace fs = std::filesystem;
using nlohmann::json;

struct RunResult {
  int status = -1;
  std::string out;
  std::string err;
};

inline std::string shell_quote(const std::string& s) {
  std::string q = "'";
  for (const char c : s) {
    if (c == '\'') {
      q += "'\\''";
    } else {
      q += c;
    }
  }
  return q + "'";
}

inline std::string slurp(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

inline void write_file(const fs::path& p, const std::string& bytes) {
  std::ofstream out(p, std::ios::binary | std::ios::trunc);
  out << bytes;
  ASSERT_TRUE(static_cast<bool>(out)) << "cannot write " << p;
}

class Cli : public ::testing::Test {
 protected:
  void SetUp() override {
    const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
    dir_ = fs::temp_directory_path() /
           ("lopside_cli_test_" + std::to_string(::getpid()) + "_" + info->name());
    fs::remove_all(dir_);
    fs::create_directories(dir_);
  }
  void TearDown() override {
    std::error_code ignored;
    fs::remove_all(dir_, ignored);
  }

  /// Runs the lopside binary with `args`, capturing both streams through files.
  RunResult run(const std::vector<std::string>& args, const std::string& program = LOPSIDE_BINARY) {
    std::string cmd = shell_quote(program);
    for (const auto& a : args) cmd += " " + shell_quote(a);
    const fs::path out = dir_ / "stdout.txt";
    const fs::path err = dir_ / "stderr.txt";
    cmd += " >" + shell_quote(out.string()) + " 2>" + shell_quote(err.string()) + " </dev/null";
    const int raw = std::system(cmd.c_str());
    RunResult r;
    r.status = (raw != -1 && WIFEXITED(raw)) ? WEXITSTATUS(raw) : -1;
    r.out = slurp(out);
    r.err = slurp(err);
    return r;
  }

  /// A lopside-synth capture in the test's folder: a 32 kHz unit, 1 MS/s for 5 ms (160
  /// cycles), `peak_a` peak, 0.1 mA noise, DC `dc_a`, noise seed `seed`.
  fs::path synth_unit(const std::string& name, double dc_a, int seed, double peak_a = 0.025) {
    const fs::path p = dir_ / name;
    const RunResult g =
        run({"-o", p.string(), "--frequency", "32000", "--rate", "1e6", "--duration", "0.005",
             "--peak", std::to_string(peak_a), "--noise-rms", "0.0001", "--dc",
             std::to_string(dc_a), "--seed", std::to_string(seed)},
            LOPSIDE_SYNTH);
    EXPECT_EQ(g.status, 0) << g.err;
    return p;
  }

  /// Runs a shell command line (for redirections and pipes), capturing both streams.
  RunResult shell(const std::string& line) {
    const fs::path out = dir_ / "sh_stdout.txt";
    const fs::path err = dir_ / "sh_stderr.txt";
    const std::string cmd =
        "(" + line + ") >" + shell_quote(out.string()) + " 2>" + shell_quote(err.string());
    const int raw = std::system(cmd.c_str());
    RunResult r;
    r.status = (raw != -1 && WIFEXITED(raw)) ? WEXITSTATUS(raw) : -1;
    r.out = slurp(out);
    r.err = slurp(err);
    return r;
  }

  fs::path file(const std::string& name, const std::string& bytes) {
    const fs::path p = dir_ / name;
    write_file(p, bytes);
    return p;
  }

  /// Runs lopside with `args` (which end in `--json -`), expects exit 0 and parses stdout.
  json run_json(const std::vector<std::string>& args) {
    const RunResult r = run(args);
    EXPECT_EQ(r.status, 0) << r.err;
    try {
      return json::parse(r.out);
    } catch (const std::exception& e) {
      ADD_FAILURE() << "stdout is not JSON (" << e.what() << "):\n" << r.out;
      return json::object();
    }
  }

  /// Runs `inspect PATH --json -` with extra flags and parses standard output.
  json inspect_json(const fs::path& p, std::vector<std::string> extra = {}) {
    std::vector<std::string> args{"inspect", p.string(), "--json", "-"};
    args.insert(args.end(), extra.begin(), extra.end());
    return run_json(args);
  }

  fs::path dir_;
};

}  // namespace lopside::test
