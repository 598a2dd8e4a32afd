#pragma once
/// \file errors.hpp
/// \brief The exception types the library throws. Every entry point throws
/// only knotpath::error (one of the types below, or the table reader's and
/// the report writer's, which derive from it) or std::bad_alloc; none aborts.

#include <cstddef>
#include <optional>
#include <stdexcept>
#include <string>

namespace knotpath {

/// The common base of everything knotpath throws: `catch (const
/// knotpath::error&)` catches every failure the library reports.
class error : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

/// An option is invalid; field() names it. Thrown by the validate() member
/// of every options struct, which each entry point calls before any work.
class invalid_option : public error {
 public:
  /// \param field name of the offending option field (as spelled in the struct)
  /// \param why   what is wrong with its value; what() reads
  ///              "knotpath: option 'FIELD': WHY"
  invalid_option(const std::string& field, const std::string& why)
      : error("knotpath: option '" + field + "': " + why), field_(field) {}
  /// Name of the offending field.
  const std::string& field() const noexcept { return field_; }

 private:
  std::string field_;
};

/// The data cannot be traced as given (sizes disagree, NaN/Inf, negative
/// weights, no observation with positive weight, values that overflow).
/// row() and column() give the place, when the problem has one, as 0-based
/// indices of the user's design (row i, predictor column j), so that a front
/// end can name it in its own terms without reading the message.
class invalid_data : public error {
 public:
  /// \param why    what is wrong and where; what() prefixes "knotpath: "
  /// \param row    the row concerned, if any
  /// \param column the predictor column concerned, if any
  explicit invalid_data(const std::string& why, std::optional<std::size_t> row = {},
                        std::optional<std::size_t> column = {})
      : error("knotpath: " + why), row_(row), column_(column), detail_(why) {}

  /// A problem of predictor column `column` as a whole: what() reads
  /// "knotpath: predictor column K" followed by `detail`.
  static invalid_data of_predictor(std::size_t column, const std::string& detail) {
    invalid_data e("predictor column " + std::to_string(column) + detail, std::nullopt, column);
    e.detail_ = detail;
    e.whole_column_ = true;
    return e;
  }

  /// A problem of row `row` (of predictor column `column`, when given):
  /// what() reads "knotpath: row R: WHAT" or "knotpath: row R, column C:
  /// WHAT" (0-based), and detail() is WHAT alone, for a front end that names
  /// the place in its own terms (a file's line and a column's name).
  static invalid_data at_row(std::size_t row, const std::string& what,
                             std::optional<std::size_t> column = {}) {
    invalid_data e("row " + std::to_string(row) +
                       (column ? ", column " + std::to_string(*column) : std::string()) + ": " + what,
                   row, column);
    e.detail_ = what;
    return e;
  }

  /// Row concerned (0-based), if any.
  std::optional<std::size_t> row() const noexcept { return row_; }
  /// Predictor column concerned (0-based), if any.
  std::optional<std::size_t> column() const noexcept { return column_; }
  /// True when the problem is one of a whole predictor column (of_predictor()).
  bool whole_column() const noexcept { return whole_column_; }
  /// The message without the "knotpath: " prefix; for a whole-column
  /// problem, the text after "predictor column K"; for a row's problem
  /// (at_row()), the text after the place.
  const std::string& detail() const noexcept { return detail_; }

 private:
  std::optional<std::size_t> row_, column_;
  std::string detail_;
  bool whole_column_ = false;
};

/// A query was asked outside its domain (negative penalty or budget,
/// relative budget outside [0, 1], new rows of the wrong width, a knot that does
/// not exist).
class invalid_query : public error {
 public:
  /// \param why which argument is out of its domain; what() prefixes "knotpath: "
  explicit invalid_query(const std::string& why) : error("knotpath: " + why) {}
};

/// A trace was abandoned because TraceOptions::interrupt_requested asked
/// for it (a user's Ctrl-C in a front end); no path was made.
class interrupted : public error {
 public:
  /// what() reads "knotpath: the trace was interrupted".
  interrupted() : error("knotpath: the trace was interrupted") {}
};

/// A broken contract between parts of knotpath or a user's own design
/// operator (sizes that disagree, a square root asked of exact arithmetic):
/// a bug to report, never a property of the data.
class internal_error : public error {
 public:
  /// \param why which contract broke; what() prefixes "knotpath: internal error: "
  explicit internal_error(const std::string& why) : error("knotpath: internal error: " + why) {}
};

}  // namespace knotpath
