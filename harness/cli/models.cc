// unseen models: list frozen models, or show one whole.
#include <fmt/core.h>

#include <nlohmann/json.hpp>

#include "harness/cli/commands.h"
#include "harness/workflow/models.h"

namespace unseen::cli {

namespace {
struct ModelsOptions {
  CommonOptions common;
  std::string show;
};

// A blend in text: its weights, intercept and each member's contribution.
void PrintBlend(const nlohmann::json& model) {
  const nlohmann::json& b = model.at("blend");
  const nlohmann::json& c = b.at("contributions");
  fmt::print("blend {} ({}, {}least squares) on partition {} ({} rows)\n",
             model.at("name").get<std::string>(), b.at("task").get<std::string>(),
             b.at("nonnegative").get<bool>() ? "non-negative " : "",
             b.at("partition").at("name").get<std::string>(), b.at("rows").get<uint64_t>());
  if (b.at("positive_class").is_string()) {
    fmt::print("  combines each member's probability of class {}\n",
               b.at("positive_class").get<std::string>());
  }
  fmt::print("  {:<20} {:>14} {:>14} {:>14}  {}\n", "member", "weight", "loss without",
             "contribution", "model digest");
  for (const nlohmann::json& m : b.at("members")) {
    fmt::print("  {:<20} {:>14.8g} {:>14.8g} {:>+14.8g}  {}\n", m.at("name").get<std::string>(),
               m.at("weight").get<double>(), m.at("loss_without").get<double>(),
               m.at("contribution").get<double>(), m.at("model_digest").get<std::string>());
  }
  fmt::print("  {:<20} {:>14.8g}\n", "intercept", b.at("intercept").get<double>());
  std::string how = c.at("selection") == "validation"
                        ? std::string("one validation split")
                        : std::to_string(c.at("folds").get<int>()) + "-fold cross-validation";
  fmt::print(
      "  {} of the blend of all members: {:.8g} ({} inside the partition, seed {});\n"
      "  a member's contribution is the loss without it minus this\n",
      c.at("metric").get<std::string>(), c.at("loss_all").get<double>(), how,
      c.at("seed").get<uint64_t>());
}
}  // namespace

Runner SetupModels(CLI::App& app) {
  auto opt = std::make_shared<ModelsOptions>();
  CLI::App* cmd = app.add_subcommand("models", "List frozen models, or --show one with every fitted parameter");
  cmd->add_option("--show", opt->show, "Print this model whole");
  AddCommonOptions(cmd, &opt->common);
  return [opt, cmd]() -> Status {
    if (!cmd->parsed()) return Status::OK();
    if (!opt->show.empty()) {
      UNSEEN_ASSIGN_OR_RETURN(nlohmann::json model, ShowModel(opt->common.ledger, opt->show));
      if (!opt->common.json && model.contains("blend")) {
        try {
          PrintBlend(model);
        } catch (const std::exception& e) {
          return Status::Corruption("frozen blend " + opt->show + " is malformed: " + e.what());
        }
        return Status::OK();
      }
      fmt::print("{}\n", opt->common.json ? model.dump() : model.dump(2));
      return Status::OK();
    }
    UNSEEN_ASSIGN_OR_RETURN(std::vector<ModelSummary> models, ListFrozenModels(opt->common.ledger));
    if (opt->common.json) {
      nlohmann::json out = nlohmann::json::array();
      for (const ModelSummary& m : models) {
        out.push_back({{"name", m.name}, {"digest", ToHex(m.digest)}, {"fit_entry", m.fit_entry},
                       {"learner", m.learner}, {"rows_read", m.rows}, {"candidates_compared", m.candidates},
                       {"steps", m.parents.size() + 1}, {"tainted", m.tainted},
                       {"contaminated", m.contaminated}, {"holdout_answers", m.holdout_answers}});
      }
      fmt::print("{}\n", out.dump());
      return Status::OK();
    }
    fmt::print("{:<20} {:<16} {:<10} {:>9} {:>10} {:>8} {:<12}\n", "model", "digest", "learner", "rows read",
               "candidates", "holdout", "taint");
    for (const ModelSummary& m : models) {
      fmt::print("{:<20} {:<16} {:<10} {:>9} {:>10} {:>8} {:<12}\n", m.name, ToHex(m.digest).substr(0, 16),
                 m.learner, m.rows, m.candidates, m.holdout_answers,
                 m.contaminated ? "CONTAMINATED" : (m.tainted ? "TAINTED" : "clean"));
    }
    return Status::OK();
  };
}

}  // namespace unseen::cli
