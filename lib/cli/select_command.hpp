#pragma once
// The select command (internals of the knotpath program; code in
// lib/cli/select_command.cpp).

#include "cli.hpp"

namespace knotpath::cli {

/// Registers `knotpath select`.
CLI::App* add_select_command(CLI::App& app, Global& global);

}  // namespace knotpath::cli
