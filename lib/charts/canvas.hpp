#pragma once
// The SVG 1.1 writer shared by the charts (private to knotpath_charts): the
// palette, number and text helpers, and a Canvas that writes elements with
// coordinates rounded to 0.01 and clamped into the view box.
#include <sstream>
#include <string>
#include <utility>
#include <vector>

namespace knotpath::charts::detail {

// Okabe & Ito (2008) palette without the yellow, which is unreadable as text
// on white: blue, vermillion, bluish green, reddish purple, orange, sky blue, black.
inline constexpr const char* kPalette[] = {"#0072B2", "#D55E00", "#009E73", "#CC79A7",
                                           "#E69F00", "#56B4E9", "#000000"};
inline constexpr int kPaletteSize = 7;
// The same hues darkened for text on white (contrast of labels).
inline constexpr const char* kTextPalette[] = {"#005A8C", "#B34700", "#007A5A", "#A0507F",
                                               "#8F6200", "#2A7DB0", "#000000"};
// Dash patterns that tell apart lines sharing a colour (every 7th line).
inline constexpr const char* kDashes[] = {"", "7 3", "2 2.5", "9 3 2 3"};
inline constexpr int kDashCount = 4;

inline constexpr const char* kFont = "DejaVu Sans, Verdana, Helvetica, Arial, sans-serif";
inline constexpr const char* kPositive = "#0072B2";  // blue: coefficient > 0
inline constexpr const char* kNegative = "#E69F00";  // orange with dark hatching: coefficient < 0
inline constexpr const char* kNegativeHatch = "#8A5A00";
inline constexpr const char* kInk = "#1B1B1B";
inline constexpr const char* kMuted = "#5A5A5A";
inline constexpr const char* kGrid = "#E3E3E3";

/// A coordinate as SVG text: at most two decimals, no trailing zeros, no "-0";
/// a non-finite value is written as 0.
std::string num(double v);
/// Approximate advance width of text in DejaVu Sans (wide among sans fonts,
/// so layouts sized with it also fit narrower fallbacks): 0.62 em a character.
double text_width(const std::string& s, double size);
/// `s` cut to at most `max_chars` code points, the last one an ellipsis.
std::string shorten(const std::string& s, std::size_t max_chars);
/// A value in labels: four significant digits.
std::string format_value(double v);

/// SVG 1.1 writer. Coordinates are clamped into the view box so a stray value
/// can never draw outside it.
class Canvas {
 public:
  Canvas(double width, double height) : width_(width), height_(height) {}

  double width() const { return width_; }
  double height() const { return height_; }
  void set_height(double h) { height_ = h; }

  double cx(double x) const;
  double cy(double y) const;

  void raw(const std::string& s) { body_ << s; }
  void open_group(const std::string& attributes) { body_ << "<g " << attributes << ">\n"; }
  void close_group() { body_ << "</g>\n"; }
  void title(const std::string& text);

  void rect(double x, double y, double w, double h, const std::string& style);
  void line(double x1, double y1, double x2, double y2, const std::string& style);
  void circle(double x, double y, double r, const std::string& style);
  void polyline(const std::vector<std::pair<double, double>>& points, const std::string& style);
  void polygon(const std::vector<std::pair<double, double>>& points, const std::string& style);
  /// anchor: start, middle or end.
  void text(double x, double y, const std::string& s, const std::string& anchor = "start",
            double size = 12, const std::string& extra = "");

  /// The whole SVG document: header, title, description, defs, a white
  /// background and the body drawn so far.
  std::string document(const std::string& title, const std::string& description,
                       const std::string& defs, const std::string& css_class) const;

 private:
  void points(const std::vector<std::pair<double, double>>& points);

  double width_, height_;
  std::ostringstream body_;
};

}  // namespace knotpath::charts::detail
