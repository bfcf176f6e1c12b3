// lopside: finds the DC component hidden in recorded current of high-voltage AC discharges.
// main only builds the command line and maps errors to exit statuses; the commands live one per
// file (see commands.hpp).

#include <CLI/CLI.hpp>
#include <exception>
#include <iostream>
#include <string>

#include "commands.hpp"
#include "lopside/error.hpp"

#ifndef LOPSIDE_VERSION
#define LOPSIDE_VERSION "unknown"
#endif

int main(int argc, char** argv) {
  CLI::App app{
      "Finds the DC component in recorded current of high-voltage AC gas discharges.\n"
      "It analyses recordings only: work on live high-voltage circuits can kill.",
      "lopside"};
  app.set_version_flag("--version", std::string("lopside ") + LOPSIDE_VERSION);
  app.require_subcommand(1);
  app.failure_message([](const CLI::App* failed, const CLI::Error& e) {
    return "lopside: " + std::string(e.what()) + "\nRun '" + failed->get_name() +
           " --help' for more information.\n";
  });

  lopside::cli::setup_inspect(app);
  lopside::cli::setup_measure(app);
  lopside::cli::setup_swap(app);

  // The one place where errors become exit statuses (lopside/error.hpp): bad usage and bad
  // input are the user's to fix (2), anything else is a bug (1).
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    // --help and --version arrive here too, as "errors" whose exit code is 0.
    const int status = app.exit(e);
    return status == 0 ? lopside::exit_code::ok : lopside::exit_code::bad_input;
  } catch (const lopside::InputError& e) {
    std::cout.flush();
    std::cerr << "lopside: " << e.what() << '\n';
    return lopside::exit_code::bad_input;
  } catch (const std::exception& e) {
    std::cout.flush();
    std::cerr << "lopside: internal error: " << e.what() << '\n';
    return lopside::exit_code::failure;
  } catch (...) {
    std::cerr << "lopside: internal error: unknown exception\n";
    return lopside::exit_code::failure;
  }
  return lopside::exit_code::ok;
}
