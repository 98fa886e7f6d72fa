// zeeline command-line entry point: registers the subcommands and maps errors to exit codes.
#include <iostream>

#include "cli/commands.hpp"
#include "cli/parallel.hpp"
#include "zeeline/core/errors.hpp"
#ifdef ZEELINE_WITH_MPI
#include "mpi/mpi_backend.hpp"
#endif

namespace {

int Run(int argc, char** argv) {
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
  zeeline::cli::AddBenchCommand(app);

  try {
    // Under an MPI launcher only `map` uses every rank; the others run on rank 0 (cli/parallel.hpp).
    if (argc > 1 && !zeeline::cli::RunsOnThisRank(argv[1])) return 0;
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int code = zeeline::cli::IsOutputRank() ? app.exit(e) : (e.get_exit_code() == 0 ? 0 : 2);
    return code == 0 ? 0 : 2;
  } catch (const zeeline::OptionError& e) {
    return zeeline::cli::ReportFailure(e, 2);
  } catch (const zeeline::UnitError& e) {
    return zeeline::cli::ReportFailure(e, 2);
  } catch (const zeeline::cli::OutputError& e) {
    return zeeline::cli::ReportFailure(e, 3);
  } catch (const zeeline::cli::AgreedError& e) {  // every rank knows it (cli/parallel.hpp AgreeOnSetup)
    return zeeline::cli::ReportFailure(e, e.code());
  } catch (const std::exception& e) {
    return zeeline::cli::ReportFailure(e, 1);
  }
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
#ifdef ZEELINE_WITH_MPI
  zeeline::cli::InstallMpiBackend();  // `mpirun -np N zeeline map` (docs/scaling.md)
#endif
  try {
    zeeline::cli::StartParallel(argc, argv);
  } catch (const zeeline::OptionError& e) {
    std::cerr << "zeeline: error: " << e.what() << "\n";
    return 2;
  }
  const int code = Run(argc, argv);
  zeeline::cli::StopParallel();
  return code;
}
