// The subcommands. Each Setup function registers one subcommand on `app`
// and returns the work to run; the work does nothing unless that
// subcommand was the one parsed.
#ifndef UNSEEN_HARNESS_CLI_COMMANDS_H_
#define UNSEEN_HARNESS_CLI_COMMANDS_H_

#include <CLI/CLI.hpp>

#include "harness/cli/common.h"

namespace unseen::cli {

Runner SetupKeygen(CLI::App& app);
Runner SetupInit(CLI::App& app);
Runner SetupSeal(CLI::App& app);
Runner SetupVerify(CLI::App& app);
Runner SetupHead(CLI::App& app);
Runner SetupHistory(CLI::App& app);
Runner SetupStatus(CLI::App& app);
Runner SetupFit(CLI::App& app);
Runner SetupModels(CLI::App& app);
Runner SetupPredict(CLI::App& app);
Runner SetupExport(CLI::App& app);
Runner SetupScore(CLI::App& app);
Runner SetupEval(CLI::App& app);
Runner SetupBudget(CLI::App& app);
Runner SetupBound(CLI::App& app);
Runner SetupCarve(CLI::App& app);

}  // namespace unseen::cli

#endif  // UNSEEN_HARNESS_CLI_COMMANDS_H_
