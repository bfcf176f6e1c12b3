// `lopside swap`: the lead-swap test. Two captures of one unit, the supply's output leads
// exchanged between them, split into the DC that follows the supply and the DC that stays with
// the electrodes; optionally a third, the normal capture repeated, to show the bias came back.
#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cmath>
#include <iostream>
#include <memory>
#include <optional>
#include <stdexcept>
#include <string>
#include <utility>
#include <vector>

#include "commands.hpp"
#include "lopside/atomic_file.hpp"
#include "lopside/error.hpp"
#include "lopside/lead_swap.hpp"
#include "lopside/swap_report.hpp"
#include "output_paths.hpp"
#include "provenance.hpp"

namespace lopside::cli {
namespace {

// Measures one capture with the probe's tolerances set to 0: what remains in the u95 is the
// capture's own scatter (and its --zero stretch's), independent of the other captures. The
// probe's tolerances are added once, by analyse_lead_swap, because the same probe took them all.
SwapCapture measure_one(const AnalysisOptions& shared, const std::string& path,
                        SwapCaptureReport& report) {
  AnalysisOptions o = shared;
  o.capture_path = path;
  o.probe_offset_a = 0;
  o.probe_gain_pct = 0;
  o.max_order = 0;  // the test needs no harmonics
  const MeasureResult m = analyse_capture(o);
  report.path = path;
  report.summary = m.summary;
  report.warnings = m.warnings;
  report.metadata = m.info.metadata;
  SwapCapture c;
  c.summary = m.summary;
  c.dc_type_a = statistical_part(m.summary.dc_offset_a);
  c.asymmetry_type_a = statistical_part(m.summary.charge_asymmetry);
  return c;
}

// The name an input goes by in messages ("-" is standard input, as the readers call it).
std::string shown(const std::string& path) {
  return path == "-" ? "standard input" : path;
}

// An input as it is before anything reads it: its stat and, for a regular file, a descriptor
// for pread (standard input's own) and where its reader will start.
struct InputFile {
  int fd = -1;
  bool owned = false;  // opened here, closed here; standard input is left open
  struct stat st {};
  off_t start = 0;
  InputFile(const InputFile&) = delete;
  InputFile& operator=(const InputFile&) = delete;
  InputFile() = default;
  ~InputFile() {
    if (owned) ::close(fd);
  }
};

// States the input without opening it (stat follows symlinks; standard input by its own
// descriptor); false when it cannot be stated (the reader then reports that, naming the file).
// Nothing is opened here: opening a FIFO, even briefly, would let its writer start and then
// meet a closed pipe.
bool stat_input(const std::string& path, InputFile& f) {
  return path == "-" ? ::fstat(STDIN_FILENO, &f.st) == 0 : ::stat(path.c_str(), &f.st) == 0;
}

// Opens a regular file for pread, or takes standard input's descriptor without moving it.
bool open_regular(const std::string& path, InputFile& f) {
  if (path == "-") {
    f.fd = STDIN_FILENO;
    // Standard input from a regular file may have been opened part-way; its reader starts at
    // the current offset, so the comparison does too.
    const off_t at = ::lseek(f.fd, 0, SEEK_CUR);
    f.start = at > 0 ? at : 0;
    return true;
  }
  f.fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  f.owned = f.fd >= 0;
  return f.owned;
}

// Reads `size` bytes at `offset` with pread, which leaves the descriptor's offset alone (POSIX
// pread), so standard input is still read from where it stood.
bool read_at(int fd, char* data, std::size_t size, off_t offset) {
  while (size > 0) {
    const ssize_t got = ::pread(fd, data, size, offset);
    if (got < 0 && errno == EINTR) continue;
    if (got <= 0) return false;
    data += got;
    size -= static_cast<std::size_t>(got);
    offset += got;
  }
  return true;
}

// Byte-for-byte equality of two regular files of equal length, 64 KiB at a time (memory stays
// bounded; two different recordings almost always differ in their first block). A read error
// counts as "not shown equal": the readers then report it.
bool same_bytes(const InputFile& a, const InputFile& b, off_t length) {
  constexpr std::size_t kChunk = 64 * 1024;
  std::vector<char> buf_a(kChunk), buf_b(kChunk);
  for (off_t done = 0; done < length;) {
    const auto n = static_cast<std::size_t>(std::min<off_t>(length - done, kChunk));
    if (!read_at(a.fd, buf_a.data(), n, a.start + done) ||
        !read_at(b.fd, buf_b.data(), n, b.start + done)) {
      return false;
    }
    if (std::char_traits<char>::compare(buf_a.data(), buf_b.data(), n) != 0) return false;
    done += static_cast<off_t>(n);
  }
  return true;
}

// One of the captures, by the name it has on the command line.
struct Role {
  const std::string& path;
  const char* name;  // "NORMAL", "SWAPPED", "NORMAL_AGAIN"
};

// Issue 9, item 8: a lead-swap needs two different recordings. The same capture given twice
// (one path twice, a symlink or hard link to it, "-" and /dev/stdin) or a copy of it under
// another name would be split into D = (N − S)/2 = 0 exactly and E = N, a "self-rectification"
// drawn from no swap at all, so the pair is refused before any reading (exit 2). Identity is
// by device and inode, as check_output_paths() compares paths; content is compared for two
// regular files (size first, then bytes). A pipe or FIFO cannot be compared without consuming
// it, so only its identity is checked; a compressed copy of an uncompressed capture is not
// recognised either (its bytes differ). The repeat of the normal capture is held to the same
// rule against both others: a copy of N would "come back" by construction, and a copy of S is
// no repeat at all.
void refuse_identical_captures(const Role& first, const Role& second, const std::string& why) {
  if (first.path == "-" && second.path == "-") {
    throw InputError(shown(second.path), std::string("given as both ") + first.name + " and " +
                                             second.name +
                                             ": standard input can hold only one of the two "
                                             "captures, and " +
                                             why);
  }
  InputFile a, b;
  if (!stat_input(first.path, a) || !stat_input(second.path, b)) return;
  if (a.st.st_dev == b.st.st_dev && a.st.st_ino == b.st.st_ino) {
    throw InputError(shown(second.path), std::string("is the same file as ") + first.name + " (" +
                                             shown(first.path) + "); " + why);
  }
  if (!S_ISREG(a.st.st_mode) || !S_ISREG(b.st.st_mode)) return;
  if (!open_regular(first.path, a) || !open_regular(second.path, b)) return;
  const off_t a_length = a.st.st_size - a.start, b_length = b.st.st_size - b.start;
  if (a_length != b_length || a_length <= 0) return;
  if (same_bytes(a, b, a_length)) {
    throw InputError(shown(second.path), std::string("has the same content as ") + first.name +
                                             " (" + shown(first.path) +
                                             "), byte for byte: a copy of one capture, but " + why);
  }
}

void refuse_identical_captures(const SwapOptions& o) {
  const Role normal{o.normal_path, "NORMAL"}, swapped{o.swapped_path, "SWAPPED"};
  refuse_identical_captures(
      normal, swapped,
      "a lead-swap needs two different recordings, one with the supply's leads as normal and "
      "one with them exchanged");
  if (o.again_path.empty()) return;
  const Role again{o.again_path, "NORMAL_AGAIN"};
  const std::string why =
      "the repeat of the normal capture must be a new recording, made after the swapped one "
      "with the leads back as normal, or it cannot show whether the bias came back";
  refuse_identical_captures(normal, again, why);
  refuse_identical_captures(swapped, again, why);
}

// The same recording saved twice in different forms (another delimiter, line ends, fewer
// digits, a WAV of the same samples) passes the byte comparison but still gives D = 0 and
// E = N exactly. Two recordings of one unit never agree that closely: with the same number of
// whole cycles starting at the same instant (within a hundredth of a period), their DC offsets
// and RMS values would differ by about their combined u95 from noise alone, not by a hundredth
// of it (the chance of both, for independent noise, is ~1e-4). Rounding to 6 significant
// digits moves a mean over thousands of samples by far less than that.
void refuse_same_recording(const SwapCapture& a, const std::string& a_path, const char* a_role,
                           const SwapCapture& b, const std::string& b_path, const char* b_role) {
  const CycleSummary& x = a.summary;
  const CycleSummary& y = b.summary;
  if (x.cycles != y.cycles || x.cycles == 0) return;
  const double period = (x.last_end_s - x.first_start_s) / static_cast<double>(x.cycles);
  if (!(std::fabs(x.first_start_s - y.first_start_s) <= 0.01 * period)) return;
  const double u_dc = std::hypot(x.dc_offset_a.u95, y.dc_offset_a.u95);
  const double u_rms = std::hypot(x.rms_a.u95, y.rms_a.u95);
  if (!(std::fabs(x.dc_offset_a.value - y.dc_offset_a.value) <= 0.01 * u_dc)) return;
  if (!(std::fabs(x.rms_a.value - y.rms_a.value) <= 0.01 * u_rms)) return;
  throw InputError(shown(b_path), std::string("measures as the same recording as ") + a_role +
                                      " (" + shown(a_path) + "): the same " +
                                      std::to_string(x.cycles) +
                                      " cycles from the same instant, DC offset and RMS equal to "
                                      "a hundredth of their u95; a lead-swap needs two "
                                      "different recordings (" +
                                      b_role + " saved again in another form cannot be one)");
}

}  // namespace

void setup_swap(CLI::App& app) {
  auto options = std::make_shared<SwapOptions>();
  CLI::App* sub = app.add_subcommand(
      "swap",
      "Lead-swap test: split the DC into the supply's part (reverses with the leads) and the "
      "electrodes' part (stays), from a capture with the leads normal and one with them exchanged "
      "(and optionally the normal one repeated)");
  sub->add_option("NORMAL", options->normal_path, "The capture with the leads as normal")
      ->required();
  sub->add_option("SWAPPED", options->swapped_path,
                  "The capture with the supply's two output leads exchanged")
      ->required();
  // The repeat is a third positional rather than a flag: the three captures are given in the
  // order they are recorded (N, S, then N again), the two-capture usage is unchanged, and no
  // new flag name is needed for what is simply the next recording of the procedure.
  sub->add_option("NORMAL_AGAIN", options->again_path,
                  "Optional: the normal capture recorded again after SWAPPED, leads back as "
                  "normal; shows whether the bias came back, which catches a preferred cathode "
                  "that changed between the captures");
  sub->add_option("--probe-on", options->probe_on,
                  "Where the current probe stayed: on the same electrode's lead (electrode) or on "
                  "the same supply terminal (supply)")
      ->check(CLI::IsMember({"electrode", "supply"}))
      ->capture_default_str();
  sub->add_option(
         "--json", options->json_path,
         "Also write the results as JSON to FILE; '-' writes them alone to standard output")
      ->type_name("FILE|-");
  sub->add_option("--html", options->html_path,
                  "Also write a self-contained HTML report (the captures side by side, the "
                  "supply and electrode parts with their u95, charts) to FILE; '-' writes it "
                  "alone to standard output")
      ->type_name("FILE|-");
  add_analysis_flags(*sub, options->analysis);
  // The harmonic settings do nothing here: no flag that is silently ignored.
  sub->remove_option(sub->get_option("--block-cycles"));
  sub->remove_option(sub->get_option("--max-order"));
  // One --with would be joined to every capture, each its own acquisition: refused with a
  // word on what to do instead, rather than left unknown or applied wrongly.
  sub->remove_option(sub->get_option("--with"));
  sub->add_option_function<std::string>(
         "--with",
         [](const std::string&) {
           throw CLI::ValidationError(
               "--with",
               "swap reads separate acquisitions, and one --with FILE cannot belong to both "
               "(or to all three); expected NORMAL and SWAPPED (and NORMAL_AGAIN) each "
               "holding current and voltage in one file, or measure each with `lopside "
               "measure CAPTURE --with FILE`");
         },
         "Not available here: see `lopside measure --with`")
      ->type_name("FILE")
      ->group("Reading the capture");
  sub->callback([options, sub]() {
    options->analysis.given_options = given_options(*sub, {"--json", "--html"});
    run_swap(*options);
  });
}

void run_swap(const SwapOptions& o) {
  const std::string& html_path = o.html_path;
  std::vector<std::string> inputs{o.normal_path, o.swapped_path};
  if (!o.again_path.empty()) inputs.push_back(o.again_path);
  check_output_paths(inputs, {{"--json", o.json_path, true}, {"--html", html_path, true}});
  refuse_identical_captures(o);
  // The outputs are opened first so that an unwritable target fails before the long reads.
  std::optional<AtomicOutput> json_out, html_out;
  if (!o.json_path.empty()) json_out.emplace(o.json_path);
  if (!html_path.empty()) html_out.emplace(html_path);

  std::vector<NamedInput> named{{"normal", o.normal_path}, {"swapped", o.swapped_path}};
  if (!o.again_path.empty()) named.emplace_back("normal_again", o.again_path);
  for (const std::string& w : o.analysis.reader.with_paths) named.emplace_back("with", w);
  InputHasher hasher(std::move(named));
  SwapReport report;
  report.provenance = begin_provenance("swap", o.analysis.given_options);
  add_analysis_settings(report.provenance, o.analysis);
  report.provenance.settings.emplace_back("probe_on", o.probe_on);
  const SwapCapture normal = measure_one(o.analysis, o.normal_path, report.normal);
  const SwapCapture swapped = measure_one(o.analysis, o.swapped_path, report.swapped);
  std::optional<SwapCapture> again;
  if (!o.again_path.empty()) {
    again = measure_one(o.analysis, o.again_path, report.normal_again.emplace());
  }
  refuse_same_recording(normal, o.normal_path, "NORMAL", swapped, o.swapped_path, "SWAPPED");
  if (again) {
    refuse_same_recording(normal, o.normal_path, "NORMAL", *again, o.again_path, "NORMAL_AGAIN");
    refuse_same_recording(swapped, o.swapped_path, "SWAPPED", *again, o.again_path, "NORMAL_AGAIN");
  }
  SwapProbe probe;
  probe.offset_a = o.analysis.probe_offset_a;
  probe.gain_pct = o.analysis.probe_gain_pct;
  probe.on = o.probe_on == "supply" ? ProbeOn::supply : ProbeOn::electrode;
  report.probe_offset_a = probe.offset_a;
  report.probe_gain_pct = probe.gain_pct;
  report.probe_kind = o.analysis.probe;
  report.result = again ? analyse_lead_swap(normal, swapped, *again, probe)
                        : analyse_lead_swap(normal, swapped, probe);

  report.provenance.inputs = hasher.take();
  if (json_out) {
    write_swap_json(json_out->stream(), report);
    json_out->commit();
  }
  if (html_out) {
    write_swap_html(html_out->stream(), report);
    html_out->commit();
  }
  const bool stdout_taken =
      (json_out && json_out->is_stdout()) || (html_out && html_out->is_stdout());
  if (!stdout_taken) write_swap_text(std::cout, report);
  std::cout.flush();
  if (!std::cout) throw std::runtime_error("cannot write to standard output");
}

}  // namespace lopside::cli
