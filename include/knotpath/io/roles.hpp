#pragma once
/// \file io/roles.hpp
/// \brief The roles of a table's columns (response, weights, predictors) and
/// the split of a Table into a design, a response and weights by those roles:
/// the one home of the rule the knotpath program uses to choose predictors.
///
/// The rule: the predictors are the numeric columns of the table, in table
/// order, except the response and the weights; when ColumnRoles::use is
/// given, only the columns it lists (and the ones in ColumnRoles::referenced)
/// are predictors; columns in ColumnRoles::drop never are. A library user
/// reads and splits a file in two calls:
///
/// \code
/// knotpath::io::ColumnRoles roles;
/// roles.response = "yield";
/// roles.drop = {"plot"};
/// knotpath::io::Table table = knotpath::io::read_table("field.csv", roles.read_options());
/// knotpath::io::TableSplit data = knotpath::io::split_table(table, roles);
/// auto path = knotpath::trace<double>(data.x, data.y, {}, data.weights);
/// \endcode

#include <string>
#include <utility>
#include <vector>

#include "table.hpp"

namespace knotpath::io {

/// Which columns of a table play which role. Plain data; validate() checks
/// that the roles do not contradict each other.
struct ColumnRoles {
  /// Name of the response column (required; it must be a numeric column).
  std::string response;
  /// Name of the column of observation weights; empty: unweighted.
  std::string weights;
  /// When non-empty, only these columns are predictors (table order is kept,
  /// not the order of this list). The weights column is never a predictor,
  /// even when listed here; the response may not be listed. A text column
  /// expanded into indicator columns (IndicatorOptions) stands for all of
  /// them; an indicator column ("COLUMN=LEVEL") may be listed by itself.
  std::vector<std::string> use;
  /// Columns that are never read nor used (the response, the weights and the
  /// columns in `use` or `referenced` may not be listed).
  std::vector<std::string> drop;
  /// Further columns the caller's own settings name (e.g. penalty scales or
  /// sign constraints given by column name): they must be numeric columns,
  /// and when `use` is given they are predictors as if listed there.
  std::vector<std::string> referenced;

  /// Throws role_conflict (an invalid_option) when the roles contradict each
  /// other. Checked in this order, and the first one found is reported: the
  /// response is in `drop`; the weights are the response; the response is in
  /// `use`; a needed column (the weights, then `referenced`, then `use`, in
  /// list order) is in `drop`.
  void validate() const;

  /// The options that read exactly the columns these roles need: `base`
  /// (delimiter, missing cells, ...) with the response, the weights,
  /// `referenced` and `use` appended to TableReadOptions::required, `use`
  /// plus the response and the weights appended to TableReadOptions::only
  /// when `use` is given, and `drop` appended to TableReadOptions::skip.
  /// Calls validate() first.
  TableReadOptions read_options(TableReadOptions base = {}) const;
};

/// A contradiction among ColumnRoles, with the rule broken and the column
/// concerned, so that a front end can word it in its own terms. what() is
/// invalid_option's ("knotpath: option 'FIELD': ..."), FIELD being the
/// ColumnRoles member at fault.
class role_conflict : public invalid_option {
 public:
  /// The rule a ColumnRoles broke.
  enum class Rule {
    response_dropped,     ///< the response is listed in `drop`
    weights_as_response,  ///< the weights column is the response
    response_in_use,      ///< the response is listed in `use`
    needed_but_dropped,   ///< the weights, a `referenced` or a `use` column is in `drop`
  };
  /// \param rule   the rule broken
  /// \param column the column concerned (for weights_as_response: the response)
  role_conflict(Rule rule, const std::string& column);
  /// The rule broken.
  Rule rule() const noexcept { return rule_; }
  /// The column concerned.
  const std::string& column() const noexcept { return column_; }

 private:
  Rule rule_;
  std::string column_;
};

/// Where each role sits in a Table: positions in Table::columns (the
/// outcome of the rule, before any value is moved).
struct ColumnAssignment {
  Index response = -1;                ///< position of the response
  Index weights = -1;                 ///< position of the weights; -1: unweighted
  std::vector<Index> predictors;      ///< positions of the predictors, in table order
  std::vector<std::string> names;     ///< the predictors' names, same order
  std::vector<std::string> left_out;  ///< numeric columns of the table the roles did not use
};

/// Applies the rule to a table: the positions of the response, the weights
/// and the predictors. Calls roles.validate() (role_conflict). Throws
/// invalid_data, whose detail() reads "SOURCE: ..." with SOURCE the table's
/// source, when a column the roles name is missing, a text column or was not
/// read, and when no predictor remains ("SOURCE: no numeric predictor columns
/// besides the response", followed by a hint naming the text columns that
/// read as numbers written with a decimal comma, if any).
ColumnAssignment assign_columns(const Table& table, const ColumnRoles& roles);

/// Checks that an assignment fits this table before anything is moved: every
/// position exists and still holds all its values, and no column plays two
/// roles. Throws invalid_query otherwise.
void check_assignment(const Table& table, const ColumnAssignment& columns);

/// A table split by roles: the design, the response, the weights and the
/// predictors' names.
struct TableSplit {
  Matrix<double> x;                ///< rows x predictors, columns in `names` order
  Vector<double> y;                ///< the response
  Vector<double> weights;          ///< the weights; empty when unweighted
  std::vector<std::string> names;  ///< predictor names, in x's column order
  std::vector<std::string>
      left_out;  ///< numeric columns of the table not used (see ColumnAssignment)
};

/// Moves the columns of an assignment out of the table (their blocks are
/// freed as they are copied, so the peak stays near one copy of the data);
/// the other columns stay. Throws invalid_query (check_assignment) before
/// moving anything when the assignment does not fit the table.
TableSplit split_table(Table& table, ColumnAssignment columns);

/// assign_columns, then split_table: the table's design, response and
/// weights by roles. The table should have been read with
/// roles.read_options() (any table works: the rule does not depend on how
/// it was read, but a column that was not read cannot be used).
TableSplit split_table(Table& table, const ColumnRoles& roles);

// Defined here, in the header, for the reason given in table.hpp: the
// compiled reader hands only plain buffers across its boundary.

inline TableSplit split_table(Table& table, ColumnAssignment columns) {
  check_assignment(table, columns);
  TableSplit out;
  out.y = table.take_vector(columns.response);
  if (columns.weights >= 0) out.weights = table.take_vector(columns.weights);
  out.x = table.take_matrix(columns.predictors);
  out.names = std::move(columns.names);
  out.left_out = std::move(columns.left_out);
  return out;
}

inline TableSplit split_table(Table& table, const ColumnRoles& roles) {
  return split_table(table, assign_columns(table, roles));
}

}  // namespace knotpath::io
