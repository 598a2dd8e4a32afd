// libFuzzer target: the table reader on arbitrary bytes. The reader must
// either return a table whose columns all have Table::rows values, all
// finite, or throw io::table_error (kind content: the bytes come from memory,
// never from a failing device). Anything else (another exception, a crash,
// a sanitizer report, a hang) is a bug. The first input byte chooses the
// reader options so that every mode is explored; when its top bit is set, a
// second byte chooses the newer ones (whitespace delimiter, decimal comma,
// missing tokens, indicator columns and their level limit).

#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <sstream>
#include <string>

#include <knotpath/io/table.hpp>

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using knotpath::io::table_error;
  if (size == 0) return 0;
  const std::uint8_t mode = data[0];
  knotpath::io::TableReadOptions options;
  const char delimiters[] = {0, ',', ';', '\t'};
  options.delimiter = delimiters[mode & 3];
  options.missing = (mode & 4) ? knotpath::io::MissingCells::drop : knotpath::io::MissingCells::error;
  options.keep_decimal_text = (mode & 8) != 0;
  if (mode & 16) options.required = {"y"};
  if (mode & 32) options.skip = {"a"};
  options.max_columns = (mode & 64) ? 4 : 1000;
  std::size_t skip = 1;
  if ((mode & 128) && size > 1) {
    const std::uint8_t more = data[1];
    skip = 2;
    if (more & 1) options.delimiter = ' ';
    if ((more & 2) && options.delimiter != ',') options.decimal = knotpath::io::DecimalMark::comma;
    if (more & 4) options.missing_tokens = {"-", "?"};
    if (more & 8) options.indicators.all_text = true;
    if (more & 16) options.indicators.columns = {"a"};
    if (more & 32) options.required.push_back("a=b");
    options.indicators.max_levels = (more & 64) ? 2 : 20;
    options.indicators.leave_out_reference = (more & 128) == 0;
  }
  std::istringstream in(std::string(reinterpret_cast<const char*>(data) + skip, size - skip));
  try {
    knotpath::io::Table t = knotpath::io::read_table(in, "fuzz", options);
    if (t.names.size() != t.columns.size()) std::abort();
    // Indicator columns may outnumber the header: at most max_levels each.
    if (t.names.size() > options.max_columns * options.indicators.max_levels) std::abort();
    for (std::size_t j = 0; j < t.columns.size(); ++j) {
      if (t.columns[j].size() != t.rows) std::abort();
      for (std::size_t i = 0; i < t.rows; ++i)
        if (!std::isfinite(t.columns[j][i])) std::abort();
      if (options.keep_decimal_text && t.decimal_text[j].size() != t.rows) std::abort();
    }
    if (t.rows == 0) std::abort();  // documented: no data rows is an error
  } catch (const table_error& e) {
    if (e.kind() != table_error::Kind::content) std::abort();
  }
  return 0;
}
