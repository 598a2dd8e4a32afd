// knotpath: the command-line program. Exit codes are listed in cli.hpp and
// documented in README.md.

#include <iostream>
#include <new>

#include "cli.hpp"
#include "ranks.hpp"
#include "select_command.hpp"

namespace {

using namespace knotpath::cli;

// --knots - and --json - of every command hand standard output to that
// output before the command runs (give_standard_output_to).
void route_dash_outputs(CLI::App& app) {
  for (CLI::App* command : app.get_subcommands({}))
    for (const char* name : {"--knots", "--json"})
      if (CLI::Option* option = command->get_option_no_throw(name)) {
        option->description(option->get_description() + " (-: standard output)");
        option->each([name = std::string(name)](const std::string& value) {
          if (value == "-") give_standard_output_to(name);
        });
      }
}

// Standard output is checked last, after the command's own status: a
// failed write to it (a full disk, a closed pipe) is an I/O error.
int checked_exit(int status) {
  const std::string failed = finish_standard_output();
  if (failed.empty()) return status;
  print_error(failed);
  return status == exit_ok ? exit_io : status;
}

}  // namespace

int main(int argc, char** argv) {
  using namespace knotpath::cli;
  reserve_standard_descriptors();
  Ranks::world().start(argc, argv);  // an MPI job's rank, or one process
  struct LeaveJob {
    ~LeaveJob() { Ranks::world().finish(); }
  } leave_job;
  CLI::App app{"knotpath " + version() +
               ": exact lasso and least-angle regularization paths of a table"};
  app.name("knotpath");
  app.set_version_flag("--version", "knotpath " + version());
  app.require_subcommand(1);
  app.fallthrough();
  app.failure_message([](const CLI::App*, const CLI::Error& e) {
    return "knotpath: " + user_text(e.what()) +
           "\n(knotpath --help lists the commands, knotpath COMMAND --help their options)\n";
  });
  Global global;
  app.add_flag("--quiet,-q", global.quiet, "Show no progress line on stderr");
  app.footer(
      "Examples:\n"
      "  knotpath demo\n"
      "  knotpath trace data.csv --response y --knots knots.csv\n"
      "  knotpath at data.csv --response y --penalty 2.5\n"
      "  knotpath verify data.csv --response y\n"
      "  knotpath select data.csv --response y --report report\n"
      "  knotpath select data.csv --response y --save model.kpath\n"
      "  knotpath predict model.kpath new.csv --choice least-error --out scores.csv\n"
      "Run 'knotpath COMMAND --help' for the options of one command.\n");
  add_trace_command(app, global);
  add_at_command(app, global);
  add_demo_command(app, global);
  add_verify_command(app, global);
  add_select_command(app, global);
  route_dash_outputs(app);
  add_predict_command(app, global);
  for (CLI::App* command : app.get_subcommands({}))
    if (command->get_name() != "trace" && command->get_name() != "at" && command->get_name() != "select")
      command->preparse_callback(
          [name = command->get_name()](std::size_t) { Ranks::world().require_one_process(name); });
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int code = app.exit(e);  // prints help, version or the parse error
    return checked_exit(code == 0 ? exit_ok : exit_usage);
  } catch (const quiet_exit& e) {  // a process of a multi-process run that has no word to say
    return checked_exit(e.code);
  } catch (...) {
    const ErrorOutcome error = error_outcome(std::current_exception());
    print_error(error.message);
    return checked_exit(error.code);
  }
  return checked_exit(global.status);
}
