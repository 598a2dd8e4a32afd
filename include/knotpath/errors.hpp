#pragma once
/// \file errors.hpp
/// \brief The exception types the library throws. Every entry point throws
/// only these (or std::bad_alloc); none aborts.

#include <stdexcept>
#include <string>

namespace knotpath {

/// An option is invalid; field() names it. Thrown by the validate() member
/// of every options struct, which each entry point calls before any work.
class invalid_option : public std::invalid_argument {
 public:
  /// \param field name of the offending option field (as spelled in the struct)
  /// \param why   what is wrong with its value; what() reads
  ///              "knotpath: option 'FIELD': WHY"
  invalid_option(const std::string& field, const std::string& why)
      : std::invalid_argument("knotpath: option '" + field + "': " + why), field_(field) {}
  /// Name of the offending field.
  const std::string& field() const noexcept { return field_; }

 private:
  std::string field_;
};

/// The data cannot be traced as given (sizes disagree, NaN/Inf, negative
/// weights, no observation with positive weight, values that overflow).
class invalid_data : public std::invalid_argument {
 public:
  /// \param why what is wrong and where (row, column); what() prefixes "knotpath: "
  explicit invalid_data(const std::string& why) : std::invalid_argument("knotpath: " + why) {}
};

/// A query was asked outside its domain (negative penalty or budget,
/// fraction outside [0, 1], new rows of the wrong width).
class invalid_query : public std::invalid_argument {
 public:
  /// \param why which argument is out of its domain; what() prefixes "knotpath: "
  explicit invalid_query(const std::string& why) : std::invalid_argument("knotpath: " + why) {}
};

}  // namespace knotpath
