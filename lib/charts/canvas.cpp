// The SVG 1.1 writer shared by the charts (canvas.hpp).
#include "canvas.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include <knotpath/io/charts.hpp>

namespace knotpath::charts::detail {

std::string num(double v) {
  if (!std::isfinite(v)) v = 0;
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.2f", v);
  std::string s = buf;
  while (s.back() == '0') s.pop_back();
  if (s.back() == '.') s.pop_back();
  if (s == "-0") s = "0";
  return s;
}

double text_width(const std::string& s, double size) {
  std::size_t chars = 0;
  for (unsigned char c : s)
    if ((c & 0xC0) != 0x80) ++chars;  // count UTF-8 code points
  return 0.62 * size * static_cast<double>(chars);
}

std::string shorten(const std::string& s, std::size_t max_chars) {
  std::size_t chars = 0, cut = s.size();
  for (std::size_t i = 0; i < s.size(); ++i) {
    if ((static_cast<unsigned char>(s[i]) & 0xC0) != 0x80) {
      if (chars == max_chars - 1) cut = i;
      ++chars;
    }
  }
  if (chars <= max_chars) return s;
  return s.substr(0, cut) + "\xE2\x80\xA6";  // ellipsis
}

std::string format_value(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.4g", v);
  return buf;
}

double Canvas::cx(double x) const {
  return std::clamp(x, 0.0, width_);
}
double Canvas::cy(double y) const {
  return std::clamp(y, 0.0, height_);
}

void Canvas::title(const std::string& text) {
  body_ << "<title>" << xml_escape(text) << "</title>\n";
}

void Canvas::rect(double x, double y, double w, double h, const std::string& style) {
  const double x0 = cx(x), y0 = cy(y), x1 = cx(x + w), y1 = cy(y + h);
  body_ << "<rect x=\"" << num(x0) << "\" y=\"" << num(y0) << "\" width=\""
        << num(std::max(0.0, x1 - x0)) << "\" height=\"" << num(std::max(0.0, y1 - y0)) << "\" "
        << style << "/>\n";
}

void Canvas::line(double x1, double y1, double x2, double y2, const std::string& style) {
  body_ << "<line x1=\"" << num(cx(x1)) << "\" y1=\"" << num(cy(y1)) << "\" x2=\"" << num(cx(x2))
        << "\" y2=\"" << num(cy(y2)) << "\" " << style << "/>\n";
}

void Canvas::circle(double x, double y, double r, const std::string& style) {
  body_ << "<circle cx=\"" << num(cx(x)) << "\" cy=\"" << num(cy(y)) << "\" r=\"" << num(r) << "\" "
        << style << "/>\n";
}

void Canvas::points(const std::vector<std::pair<double, double>>& points) {
  for (std::size_t i = 0; i < points.size(); ++i)
    body_ << (i ? " " : "") << num(cx(points[i].first)) << "," << num(cy(points[i].second));
}

void Canvas::polyline(const std::vector<std::pair<double, double>>& points,
                      const std::string& style) {
  if (points.size() < 2) return;
  body_ << "<polyline points=\"";
  this->points(points);
  body_ << "\" fill=\"none\" " << style << "/>\n";
}

void Canvas::polygon(const std::vector<std::pair<double, double>>& points,
                     const std::string& style) {
  if (points.size() < 3) return;
  body_ << "<polygon points=\"";
  this->points(points);
  body_ << "\" " << style << "/>\n";
}

void Canvas::text(double x, double y, const std::string& s, const std::string& anchor, double size,
                  const std::string& extra) {
  body_ << "<text x=\"" << num(cx(x)) << "\" y=\"" << num(cy(y)) << "\" font-size=\"" << num(size)
        << "\" text-anchor=\"" << anchor << "\"" << (extra.empty() ? "" : " " + extra) << ">"
        << xml_escape(s) << "</text>\n";
}

std::string Canvas::document(const std::string& title, const std::string& description,
                             const std::string& defs, const std::string& css_class) const {
  std::ostringstream out;
  out << "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" class=\"" << css_class
      << "\" width=\"" << num(width_) << "\" height=\"" << num(height_) << "\" viewBox=\"0 0 "
      << num(width_) << " " << num(height_) << "\" font-family=\"" << kFont << "\" fill=\"" << kInk
      << "\">\n"
      << "<title>" << xml_escape(title) << "</title>\n<desc>" << xml_escape(description)
      << "</desc>\n";
  if (!defs.empty()) out << "<defs>\n" << defs << "</defs>\n";
  out << "<rect x=\"0\" y=\"0\" width=\"" << num(width_) << "\" height=\"" << num(height_)
      << "\" fill=\"#FFFFFF\"/>\n"
      << body_.str() << "</svg>\n";
  return out.str();
}

}  // namespace knotpath::charts::detail
