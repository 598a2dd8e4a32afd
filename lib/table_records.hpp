#pragma once
// Records of a delimited text table (private to knotpath_io, used by
// table.cpp): a buffered character source and a reader that splits the
// input into records of fields (RFC 4180 quoting, "common practice").

#include <cstddef>
#include <cstring>
#include <istream>
#include <string>
#include <utility>
#include <vector>

#include "knotpath/io/table.hpp"

namespace knotpath::io::detail {

constexpr int end_of_input = -1;

// Buffered character source that counts bytes consumed.
class CharSource {
 public:
  explicit CharSource(std::istream& in) : in_(in), buffer_(1u << 16) {}

  int peek() {
    if (pos_ == end_ && !fill()) return end_of_input;
    return static_cast<unsigned char>(buffer_[pos_]);
  }
  int get() {
    if (pos_ == end_ && !fill()) return end_of_input;
    ++consumed_;
    return static_cast<unsigned char>(buffer_[pos_++]);
  }
  std::size_t consumed() const noexcept { return consumed_; }
  bool failed() const { return in_.bad(); }

  // Makes at least `count` bytes available when the input has them; returns
  // the view of what is buffered (for the BOM check and delimiter detection).
  std::pair<const char*, std::size_t> lookahead(std::size_t count) {
    if (end_ - pos_ < count) {
      std::memmove(buffer_.data(), buffer_.data() + pos_, end_ - pos_);
      end_ -= pos_;
      pos_ = 0;
      while (end_ < count && end_ < buffer_.size()) {
        in_.read(buffer_.data() + end_, static_cast<std::streamsize>(buffer_.size() - end_));
        const auto got = static_cast<std::size_t>(in_.gcount());
        if (got == 0) break;
        end_ += got;
      }
    }
    return {buffer_.data() + pos_, end_ - pos_};
  }
  void skip(std::size_t count) {
    pos_ += count;
    consumed_ += count;
  }

 private:
  bool fill() {
    if (!in_) return false;
    in_.read(buffer_.data(), static_cast<std::streamsize>(buffer_.size()));
    end_ = static_cast<std::size_t>(in_.gcount());
    pos_ = 0;
    return end_ > 0;
  }

  std::istream& in_;
  std::vector<char> buffer_;
  std::size_t pos_ = 0, end_ = 0;
  std::size_t consumed_ = 0;
};

struct Field {
  std::string text;
  bool quoted = false;
  std::size_t line = 0;
};

// Splits the input into records. Line numbers are physical lines, 1-based.
class RecordReader {
 public:
  // delimiter ' ' means whitespace: runs of spaces and tabs separate fields,
  // and blanks at the start and end of a line are ignored.
  RecordReader(CharSource& source, std::string name, char delimiter)
      : in_(source), name_(std::move(name)), delimiter_(delimiter), whitespace_(delimiter == ' ') {}

  // Fields past this many are parsed and counted but not kept (their text
  // goes to one scratch field), so a huge row costs no memory per field.
  void keep_at_most(std::size_t fields) { keep_ = fields; }
  // Counts `lines` more into the line numbers from here on (lines of the
  // file that this input leaves out: a piece of a file after its header).
  void skip_line_numbers(std::size_t lines) { line_ += lines; }

  // Reads the next non-blank record into fields[0 .. min(count, keep)); false
  // at the end. count is the record's full number of fields.
  bool next(std::vector<Field>& fields, std::size_t& count) {
    count = 0;
    for (;;) {  // skip blank lines
      if (whitespace_) skip_blanks();
      const int c = in_.peek();
      if (c == '\n' || c == '\r') {
        consume_line_end();
        continue;
      }
      if (c == end_of_input) {
        check_failure();
        return false;
      }
      break;
    }
    record_line_ = line_;
    for (;;) {
      if (count < keep_ && count == fields.size()) fields.emplace_back();
      Field& f = count < keep_ ? fields[count] : scratch_;
      f.text.clear();
      f.quoted = false;
      f.line = line_;
      int c = in_.peek();
      if (c == '"') {
        in_.get();
        f.quoted = true;
        const std::size_t open_line = line_;
        for (;;) {
          c = in_.get();
          if (c == end_of_input) {
            check_failure();
            throw table_error(table_error::Kind::content, name_, open_line, count + 1,
                              "unterminated quoted field (the quote opened here is never closed)");
          }
          if (c == '"') {
            if (in_.peek() == '"') {
              in_.get();
              f.text.push_back('"');
              continue;
            }
            break;
          }
          if (c == '\n' || (c == '\r' && in_.peek() != '\n')) ++line_;
          f.text.push_back(static_cast<char>(c));
        }
        if (whitespace_) {  // a run of blanks or the line end closes the field
          const bool gap = skip_blanks();
          c = in_.peek();
          ++count;
          if (c == '\n' || c == '\r' || c == end_of_input) break;
          if (gap) continue;
          throw table_error(table_error::Kind::content, name_, line_, count,
                            "unexpected text after the closing quote of a quoted field");
        }
        while (in_.peek() == ' ') in_.get();
        c = in_.peek();
        ++count;
        if (c == delimiter_) {
          in_.get();
          continue;
        }
        if (c == '\n' || c == '\r' || c == end_of_input) break;
        throw table_error(table_error::Kind::content, name_, line_, count,
                          "unexpected text after the closing quote of a quoted field");
      }
      for (;;) {
        c = in_.peek();
        if (c == end_of_input || c == '\n' || c == '\r' || c == delimiter_) break;
        if (whitespace_ && blank(c)) break;
        f.text.push_back(static_cast<char>(in_.get()));
      }
      ++count;
      if (whitespace_) {  // trailing blanks end the record, not a field
        skip_blanks();
        c = in_.peek();
        if (c == end_of_input || c == '\n' || c == '\r') break;
        continue;
      }
      if (c == delimiter_) {
        in_.get();
        continue;
      }
      break;
    }
    consume_line_end();
    return true;
  }

  std::size_t record_line() const noexcept { return record_line_; }
  std::size_t line() const noexcept { return line_; }

 private:
  static bool blank(int c) { return c == ' ' || c == '\t'; }
  // Skips spaces and tabs; true when there were any.
  bool skip_blanks() {
    bool any = false;
    while (blank(in_.peek())) {
      in_.get();
      any = true;
    }
    return any;
  }
  void consume_line_end() {
    const int c = in_.peek();
    if (c == '\r') {
      in_.get();
      if (in_.peek() == '\n') in_.get();
      ++line_;
    } else if (c == '\n') {
      in_.get();
      ++line_;
    } else {
      check_failure();
    }
  }
  void check_failure() {
    if (in_.failed())
      throw table_error(table_error::Kind::input_output, name_, line_, 0, "read error");
  }

  CharSource& in_;
  std::string name_;
  char delimiter_;
  bool whitespace_;
  std::size_t line_ = 1;
  std::size_t record_line_ = 1;
  std::size_t keep_ = static_cast<std::size_t>(-1);
  Field scratch_;
};

}  // namespace knotpath::io::detail
