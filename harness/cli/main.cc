// unseen: keeps machine-learning evaluation honest. This file only wires the
// subcommands together and maps results to exit codes (README "Exit codes").
#include <fmt/core.h>

#include <CLI/CLI.hpp>
#include <vector>

#include "harness/cli/commands.h"
#include "storage/version.h"

int main(int argc, char** argv) {
  using namespace unseen::cli;
  CLI::App app{
      "unseen: carve and seal a holdout, record every step that reads data, and "
      "report honest holdout scores"};
  app.set_version_flag("--version", std::string("unseen ") + unseen::kVersion);
  app.require_subcommand(1);
  std::vector<Runner> runners = {
      SetupKeygen(app), SetupInit(app),    SetupSeal(app),   SetupVerify(app),
      SetupHead(app),   SetupHistory(app), SetupStatus(app), SetupFit(app),
      SetupModels(app), SetupPredict(app), SetupExport(app), SetupScore(app),
      SetupCarve(app),  SetupEval(app),    SetupBudget(app), SetupBound(app)};
  try {
    app.parse(argc, argv);
  } catch (const CLI::CallForHelp& e) {
    return app.exit(e);
  } catch (const CLI::CallForAllHelp& e) {
    return app.exit(e);
  } catch (const CLI::CallForVersion& e) {
    return app.exit(e);
  } catch (const CLI::ParseError& e) {
    fmt::print(stderr, "unseen: error: {}\nRun with --help for usage.\n", e.what());
    return static_cast<int>(ExitCode::kBadInput);
  }
  for (const Runner& run : runners) {
    unseen::Status s;
    try {
      s = run();
    } catch (const std::exception& e) {
      s = unseen::Status::Internal(std::string("unexpected exception: ") + e.what());
    }
    if (!s.ok()) {
      EndProgress();
      PrintError(s);
      return static_cast<int>(ExitCodeFor(s));
    }
  }
  return 0;
}
