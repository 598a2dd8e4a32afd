// knotpath: the command-line program. Exit codes are listed in cli.hpp and
// documented in README.md.

#include <iostream>
#include <new>

#include "cli.hpp"
#include "select_command.hpp"

int main(int argc, char** argv) {
  using namespace knotpath::cli;
  CLI::App app{"knotpath " + version() +
               ": exact lasso and least-angle regularization paths of a table"};
  app.name("knotpath");
  app.set_version_flag("--version", "knotpath " + version());
  app.require_subcommand(1);
  app.fallthrough();
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
  add_predict_command(app, global);
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int code = app.exit(e);  // prints help, version or the parse error
    return code == 0 ? exit_ok : exit_usage;
  } catch (const failure& e) {
    std::cerr << "knotpath: " << e.what() << '\n';
    return e.code();
  } catch (const knotpath::io::table_error& e) {
    std::cerr << "knotpath: " << e.what() << '\n';
    return e.kind() == knotpath::io::table_error::Kind::input_output ? exit_io : exit_bad_input;
  } catch (const std::bad_alloc&) {
    std::cerr << "knotpath: out of memory\n";
    return exit_internal;
  } catch (const std::exception& e) {
    std::cerr << "knotpath: internal error: " << e.what() << '\n';
    return exit_internal;
  }
  return global.status;
}
