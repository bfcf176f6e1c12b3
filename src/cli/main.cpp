// lopside: finds the DC component hidden in recorded current of high-voltage AC discharges.
// main only builds the command line and maps errors to exit statuses; the commands live one per
// file (see commands.hpp).

#include <fcntl.h>
#ifdef __GLIBC__
#include <malloc.h>
#endif
#include <unistd.h>

#include <CLI/CLI.hpp>
#include <csignal>
#include <exception>
#include <iostream>
#include <string>

#include "commands.hpp"
#include "lopside/atomic_file.hpp"
#include "lopside/error.hpp"
#include "provenance.hpp"

namespace {

// A closed standard input or error (`2>&-`) would let the next open(2) take its number (POSIX
// gives the lowest free descriptor), and error messages would then be written into an output
// file. /dev/null takes those places first. A closed standard output is refused instead (see
// StandardOutput::check_open), since every command writes its result there.
void fill_closed_descriptors() {
  for (const int fd : {STDIN_FILENO, STDERR_FILENO}) {
    if (::fcntl(fd, F_GETFD) != -1) continue;
    const int null_fd = ::open("/dev/null", fd == STDIN_FILENO ? O_RDONLY : O_WRONLY);
    if (null_fd >= 0 && null_fd != fd) {
      ::dup2(null_fd, fd);
      ::close(null_fd);
    }
  }
}

}  // namespace

int main(int argc, char** argv) {
  fill_closed_descriptors();
#ifdef __GLIBC__
  // glibc raises its mmap threshold to the size of each large block freed (up to 32 MiB), so
  // the text reader's look-ahead, once freed, is kept in the heap and a later block takes new
  // pages beside it: a 20 M-row CSV peaked at 66 MB resident. A fixed threshold returns such
  // blocks to the system when freed (59 MB, for about 2 % more time; mallopt(3)).
  mallopt(M_MMAP_THRESHOLD, 128 * 1024);
#endif
  // A reader that goes away (`lopside … | head -1`) would otherwise kill lopside silently with
  // SIGPIPE, leaving the exit status to say nothing useful; ignored, the write fails with
  // EPIPE and is reported as a failed output (exit 3) like a full disk.
  std::signal(SIGPIPE, SIG_IGN);
  // std::cout through a buffer that remembers why a write failed, for the message.
  const lopside::StandardOutput standard_output;

  CLI::App app{
      "Finds the DC component in recorded current of high-voltage AC gas discharges.\n"
      "It analyses recordings only: work on live high-voltage circuits can kill.",
      "lopside"};
  app.set_version_flag("--version", "lopside " + lopside::cli::tool_version());
  app.require_subcommand(1);
  app.failure_message([](const CLI::App* failed, const CLI::Error& e) {
    return "lopside: " + std::string(e.what()) + "\nRun '" + failed->get_name() +
           " --help' for more information.\n";
  });

  lopside::cli::setup_inspect(app);
  lopside::cli::setup_measure(app);
  lopside::cli::setup_swap(app);
  lopside::cli::setup_lot(app);
  lopside::cli::setup_trend(app);

  // The one place where errors become exit statuses (lopside/error.hpp): bad usage and bad
  // input are the user's to fix (2), an output that could not be written is 3, anything else
  // is a bug (1).
  try {
    lopside::StandardOutput::check_open();
    app.parse(argc, argv);
    lopside::flush_standard_output();
    if (lopside::cli::command_status != lopside::exit_code::ok) return lopside::cli::command_status;
  } catch (const CLI::ParseError& e) {
    // --help and --version arrive here too, as "errors" whose exit code is 0.
    const int status = app.exit(e);
    return status == 0 ? lopside::exit_code::ok : lopside::exit_code::bad_input;
  } catch (const lopside::InputError& e) {
    std::cout.flush();
    std::cerr << "lopside: " << e.what() << '\n';
    return lopside::exit_code::bad_input;
  } catch (const lopside::OutputError& e) {
    std::cout.flush();
    std::cerr << "lopside: " << e.what() << '\n';
    return lopside::exit_code::output_failed;
  } catch (const std::exception& e) {
    std::cout.flush();
    // A command that noticed the failing standard output in its own words (a runtime_error)
    // still has an output failure, not a bug: the cause is the descriptor's.
    if (standard_output.failed()) {
      std::cerr << "lopside: " << standard_output.failure_text() << '\n';
      return lopside::exit_code::output_failed;
    }
    std::cerr << "lopside: internal error: " << e.what() << '\n';
    return lopside::exit_code::failure;
  } catch (...) {
    std::cerr << "lopside: internal error: unknown exception\n";
    return lopside::exit_code::failure;
  }
  return lopside::exit_code::ok;
}
