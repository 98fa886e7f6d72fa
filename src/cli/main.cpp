// zeeline command-line entry point: registers the subcommands and maps errors to exit codes.
#include <iostream>

#include "cli/commands.hpp"
#include "zeeline/core/errors.hpp"

int main(int argc, char** argv) {
  CLI::App app{
      "zeeline " ZEELINE_VERSION " -- magnetic fields from polarised spectra.\n"
      "Landé factors and Zeeman patterns, Stokes cubes in, field maps out.\n"
      "Run 'zeeline <command> --help' for the options and examples of each command.",
      "zeeline"};
  app.set_version_flag("--version", "zeeline " ZEELINE_VERSION);
  app.require_subcommand(1);
  app.fallthrough(false);

  zeeline::cli::AddLandeCommand(app);
  zeeline::cli::AddLineCommand(app);
  zeeline::cli::AddProfileCommand(app);
  zeeline::cli::AddMapCommand(app, argc, argv);
  zeeline::cli::AddSimulateCommand(app, argc, argv);
  zeeline::cli::AddMeasureCommand(app);
  zeeline::cli::AddInfoCommand(app);
  zeeline::cli::AddViewCommand(app);
  zeeline::cli::AddBroadeningCommand(app);
  zeeline::cli::AddCalibrateCommand(app);

  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int code = app.exit(e);
    return code == 0 ? 0 : 2;
  } catch (const zeeline::OptionError& e) {
    std::cerr << "zeeline: error: " << e.what() << "\n";
    return 2;
  } catch (const zeeline::UnitError& e) {
    std::cerr << "zeeline: error: " << e.what() << "\n";
    return 2;
  } catch (const zeeline::cli::OutputError& e) {
    std::cerr << "zeeline: error: " << e.what() << "\n";
    return 3;
  } catch (const std::exception& e) {
    std::cerr << "zeeline: error: " << e.what() << "\n";
    return 1;
  }
  return 0;
}
