// Tests of the charts (include/knotpath/io/charts.hpp): every SVG and the
// HTML report parse as XML with tinyxml2 (an independent parser from
// Debian's libtinyxml2-dev), have the structure the path implies, keep their
// coordinates inside the view box, and render to a non-blank PNG with
// rsvg-convert (Debian librsvg2-bin), decoded with libpng.
#include <gtest/gtest.h>
#include <png.h>
#include <tinyxml2.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <functional>
#include <limits>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include <knotpath/io/charts.hpp>
#include <knotpath/knotpath.hpp>

#include "test_support.hpp"

namespace {

namespace kc = knotpath::charts;
using knotpath::Index;

// ---------------------------------------------------------------- helpers

struct Parsed {
  tinyxml2::XMLDocument doc;
  tinyxml2::XMLError error = tinyxml2::XML_SUCCESS;
};

std::unique_ptr<Parsed> parse(const std::string& text) {
  auto p = std::make_unique<Parsed>();
  p->error = p->doc.Parse(text.c_str(), text.size());
  return p;
}

bool has_class(const tinyxml2::XMLElement* e, const std::string& cls) {
  const char* c = e->Attribute("class");
  if (!c) return false;
  std::istringstream words(c);
  std::string w;
  while (words >> w)
    if (w == cls) return true;
  return false;
}

void walk(const tinyxml2::XMLElement* e,
          const std::function<void(const tinyxml2::XMLElement*)>& f) {
  for (; e; e = e->NextSiblingElement()) {
    f(e);
    walk(e->FirstChildElement(), f);
  }
}

std::vector<const tinyxml2::XMLElement*> with_class(const tinyxml2::XMLElement* root,
                                                    const std::string& cls) {
  std::vector<const tinyxml2::XMLElement*> out;
  walk(root, [&](const tinyxml2::XMLElement* e) {
    if (has_class(e, cls)) out.push_back(e);
  });
  return out;
}

std::string text_of(const tinyxml2::XMLElement* e) {
  const tinyxml2::XMLElement* t = e->FirstChildElement("text");
  return t && t->GetText() ? t->GetText() : "";
}

std::string title_of(const tinyxml2::XMLElement* e) {
  const tinyxml2::XMLElement* t = e->FirstChildElement("title");
  return t && t->GetText() ? t->GetText() : "";
}

// Every drawing coordinate outside <defs> lies in the view box (to 0.01, the
// rounding of the writer).
void expect_inside_view_box(const tinyxml2::XMLElement* svg) {
  double vx = 0, vy = 0, vw = 0, vh = 0;
  ASSERT_NE(svg->Attribute("viewBox"), nullptr);
  std::istringstream(svg->Attribute("viewBox")) >> vx >> vy >> vw >> vh;
  ASSERT_GT(vw, 0);
  ASSERT_GT(vh, 0);
  const double tol = 0.011;  // coordinates are written to 0.01
  std::size_t checked = 0;
  std::function<void(const tinyxml2::XMLElement*)> visit = [&](const tinyxml2::XMLElement* e) {
    for (; e; e = e->NextSiblingElement()) {
      if (std::string(e->Name()) == "defs") continue;  // pattern tiles have their own space
      for (const char* a : {"x", "x1", "x2", "cx"})
        if (const char* v = e->Attribute(a)) {
          const double x = std::atof(v);
          EXPECT_GE(x, vx - tol) << e->Name() << " " << a;
          EXPECT_LE(x, vx + vw + tol) << e->Name() << " " << a;
          ++checked;
        }
      for (const char* a : {"y", "y1", "y2", "cy"})
        if (const char* v = e->Attribute(a)) {
          const double y = std::atof(v);
          EXPECT_GE(y, vy - tol) << e->Name() << " " << a;
          EXPECT_LE(y, vy + vh + tol) << e->Name() << " " << a;
          ++checked;
        }
      if (std::string(e->Name()) == "rect") {
        EXPECT_LE(e->DoubleAttribute("x") + e->DoubleAttribute("width"), vx + vw + tol);
        EXPECT_LE(e->DoubleAttribute("y") + e->DoubleAttribute("height"), vy + vh + tol);
      }
      if (const char* pts = e->Attribute("points")) {
        std::string s(pts);
        std::replace(s.begin(), s.end(), ',', ' ');
        std::istringstream in(s);
        double x, y;
        while (in >> x >> y) {
          EXPECT_GE(x, vx - tol);
          EXPECT_LE(x, vx + vw + tol);
          EXPECT_GE(y, vy - tol);
          EXPECT_LE(y, vy + vh + tol);
          ++checked;
        }
      }
      visit(e->FirstChildElement());
    }
  };
  visit(svg->FirstChildElement());
  EXPECT_GT(checked, 20u);  // the walk really saw the drawing
}

// (position, value) of the labelled penalty-axis ticks, left to right.
std::vector<std::pair<double, double>> x_ticks(const tinyxml2::XMLElement* svg) {
  std::vector<std::pair<double, double>> out;
  for (const auto* g : with_class(svg, "x-tick")) {
    const auto* line = g->FirstChildElement("line");
    std::string label = text_of(g);
    if (label.empty()) label = title_of(g);
    if (!line || label.empty()) continue;
    out.emplace_back(line->DoubleAttribute("x1"), std::strtod(label.c_str(), nullptr));
  }
  std::sort(out.begin(), out.end());
  return out;
}

// Predictors ever active, in order of first entry, computed from the path
// itself (independently of the chart code).
std::vector<Index> entry_order(const knotpath::Path<double>& path) {
  std::vector<Index> order;
  for (std::size_t k = 0; k < path.knots().size(); ++k) {
    const auto& knot = path.knots()[k];
    if (knot.event == knotpath::EventKind::enter &&
        std::find(order.begin(), order.end(), knot.predictor) == order.end())
      order.push_back(knot.predictor);
  }
  return order;
}

struct Demo {
  knotpath::demo::DemoData data = knotpath::demo::greenhouse();
  knotpath::Path<double> path = knotpath::trace<double>(data.x, data.y);
  kc::ChartPath chart = kc::chart_path(path, data.predictor_names, data.response_name);
};

const Demo& demo() {
  static const Demo d;
  return d;
}

// A wide problem: 130 predictors, AR(1) correlated columns (test_support).
struct Wide {
  knotpath::testing::Problem problem = knotpath::testing::ar1_problem(90, 130, 0.5, 7u, 12);
  knotpath::Path<double> path = knotpath::trace<double>(problem.x, problem.y);
  kc::ChartPath chart = kc::chart_path(path);
};

const Wide& wide() {
  static const Wide w;
  return w;
}

kc::SelectionCurve small_curve() {
  kc::SelectionCurve c;
  c.penalty_name = "mu";
  c.folds = 5;
  // An invented U-shaped curve: error (mu - 0.1)^2 + 1 on a log grid.
  for (int i = 0; i <= 40; ++i) {
    const double mu = std::pow(10.0, -3.0 + 3.0 * i / 40.0);
    c.points.push_back({mu, 1 + (mu - 0.1) * (mu - 0.1), 0.05 + 0.02 * mu});
  }
  c.minimizer = 0.1;
  c.minimum_error = 1;
  c.one_se = 0.3;
  c.criteria.push_back({"AIC", {{1.0, 50}, {0.3, 20}, {0.1, 12}, {0.01, 15}, {0.0, 18}}});
  c.criteria.push_back({"BIC", {{1.0, 60}, {0.3, 25}, {0.1, 24}, {0.01, 30}, {0.0, 40}}});
  return c;
}

// ------------------------------------------------------------ axis helpers

// Ticks follow Heckbert's "nice numbers" (Graphics Gems, 1990): a step of 1,
// 2 or 5 times a power of ten, inside the range, ascending.
TEST(ChartTicks, LinearTicksAreRoundAscendingAndInsideTheRange) {
  const std::vector<std::pair<double, double>> ranges = {
      {0, 1}, {-0.58, 1.26}, {0.153, 1.27}, {0, 46.3}, {-3e-5, 7e-5}, {12, 12345}, {-1, -0.2}};
  for (auto [lo, hi] : ranges) {
    const auto t = kc::detail::linear_ticks(lo, hi, 6);
    ASSERT_GE(t.size(), 3u) << lo << " " << hi;
    const double step = t[1] - t[0];
    const double mantissa = step / std::pow(10.0, std::floor(std::log10(step)));
    // 1e-9 relative: the step is a difference of two rounded multiples.
    EXPECT_TRUE(std::abs(mantissa - 1) < 1e-9 || std::abs(mantissa - 2) < 1e-9 ||
                std::abs(mantissa - 5) < 1e-9 || std::abs(mantissa - 10) < 1e-9)
        << "step " << step;
    for (std::size_t i = 0; i < t.size(); ++i) {
      EXPECT_GE(t[i], lo - step * 1e-6);
      EXPECT_LE(t[i], hi + step * 1e-6);
      if (i) {
        EXPECT_NEAR(t[i] - t[i - 1], step, step * 1e-9);  // equal spacing up to rounding
      }
      // Each tick is an integer multiple of the step (round numbers).
      EXPECT_NEAR(t[i] / step, std::round(t[i] / step), 1e-6);
    }
  }
}

TEST(ChartTicks, LogTicksArePowersOfTenOrTheir2And5Multiples) {
  for (auto [lo, hi] :
       std::vector<std::pair<double, double>>{{0.034, 16.3}, {1e-4, 50}, {0.5, 8}, {1e-12, 1}}) {
    const auto t = kc::detail::log_ticks(lo, hi);
    ASSERT_GE(t.size(), 2u);
    for (std::size_t i = 0; i < t.size(); ++i) {
      EXPECT_GE(t[i], lo * (1 - 1e-9));
      EXPECT_LE(t[i], hi * (1 + 1e-9));
      if (i) {
        EXPECT_GT(t[i], t[i - 1]);
      }
      const double m = t[i] / std::pow(10.0, std::floor(std::log10(t[i]) + 1e-12));
      EXPECT_TRUE(std::abs(m - 1) < 1e-9 || std::abs(m - 2) < 1e-9 || std::abs(m - 5) < 1e-9)
          << t[i];
    }
  }
}

TEST(ChartTicks, LabelsAreShortAndReadBack) {
  EXPECT_EQ(kc::detail::tick_label(0.1 + 0.2, 0.1), "0.3");
  EXPECT_EQ(kc::detail::tick_label(-0.5, 0.5), "-0.5");
  EXPECT_EQ(kc::detail::tick_label(20, 10), "20");
  EXPECT_EQ(kc::detail::tick_label(0.005, 0.005), "0.005");
  EXPECT_EQ(kc::detail::tick_label(0.75, 0.25), "0.75");  // not rounded to the step's first digit
  // Outside [1e-4, 1e7) the exponent form; it must read back to the value
  // to 1e-3 relative (three significant digits are plenty for a tick).
  const std::string small = kc::detail::tick_label(2e-7, 2e-7);
  EXPECT_NEAR(std::strtod(small.c_str(), nullptr), 2e-7, 2e-10);
  EXPECT_LE(small.size(), 6u);
}

TEST(ChartLabels, SpreadKeepsTheGapTheBoundsAndTheOrder) {
  const std::vector<double> wanted = {100, 101, 102, 50, 103, 300, 299.5, 10};
  const double gap = 13, lo = 20, hi = 320;
  const auto z = kc::detail::spread_labels(wanted, gap, lo, hi);
  ASSERT_EQ(z.size(), wanted.size());
  std::vector<std::size_t> order(wanted.size());
  for (std::size_t i = 0; i < order.size(); ++i) order[i] = i;
  std::stable_sort(order.begin(), order.end(),
                   [&](auto a, auto b) { return wanted[a] < wanted[b]; });
  for (std::size_t i = 0; i < order.size(); ++i) {
    EXPECT_GE(z[order[i]], lo - 1e-9);
    EXPECT_LE(z[order[i]], hi + 1e-9);
    if (i) {
      EXPECT_GE(z[order[i]] - z[order[i - 1]], gap - 1e-9);  // 1e-9: floating sums of the gap
    }
  }
  // Labels already apart stay where they were wanted.
  const auto same = kc::detail::spread_labels({40, 80, 120}, 13, 0, 200);
  EXPECT_NEAR(same[0], 40, 1e-12);
  EXPECT_NEAR(same[1], 80, 1e-12);
  EXPECT_NEAR(same[2], 120, 1e-12);
  // Two labels on top of each other move symmetrically (least squares).
  const auto pair = kc::detail::spread_labels({100, 100}, 10, 0, 200);
  EXPECT_NEAR(std::min(pair[0], pair[1]), 95, 1e-12);
  EXPECT_NEAR(std::max(pair[0], pair[1]), 105, 1e-12);
}

// ----------------------------------------------------------- chart 1: lanes

TEST(ActivityLanes, OneLanePerActivePredictorInOrderOfEntry) {
  const auto& d = demo();
  const std::string svg = kc::activity_lanes_svg(d.chart);
  auto p = parse(svg);
  ASSERT_EQ(p->error, tinyxml2::XML_SUCCESS) << p->doc.ErrorStr();
  const auto* root = p->doc.RootElement();
  EXPECT_STREQ(root->Name(), "svg");
  EXPECT_STREQ(root->Attribute("version"), "1.1");
  EXPECT_STREQ(root->Attribute("xmlns"), "http://www.w3.org/2000/svg");
  const auto order = entry_order(d.path);
  ASSERT_FALSE(order.empty());
  const auto lanes = with_class(root, "lane");
  ASSERT_EQ(lanes.size(), order.size());
  for (std::size_t i = 0; i < lanes.size(); ++i)
    EXPECT_EQ(title_of(lanes[i]), d.data.predictor_names[static_cast<std::size_t>(order[i])]);
  // Every lane has a bar and one entry marker per enter event of its predictor.
  for (std::size_t i = 0; i < lanes.size(); ++i) {
    EXPECT_FALSE(with_class(lanes[i]->FirstChildElement(), "bar").empty());
    std::size_t enters = 0;
    for (const auto& k : d.path.knots())
      enters += k.event == knotpath::EventKind::enter && k.predictor == order[i];
    EXPECT_EQ(with_class(lanes[i]->FirstChildElement(), "enter").size(), enters);
  }
  expect_inside_view_box(root);
}

TEST(ActivityLanes, NegativeCoefficientsAreHatchedPositiveOnesSolid) {
  const auto& d = demo();
  auto p = parse(kc::activity_lanes_svg(d.chart));
  ASSERT_EQ(p->error, tinyxml2::XML_SUCCESS);
  // The demo's truth has shading_pct working against the yield (demo.hpp):
  // its lane carries negative bars only; light_hours positive only.
  for (const auto* lane : with_class(p->doc.RootElement(), "lane")) {
    const std::string name = title_of(lane);
    const auto neg = with_class(lane->FirstChildElement(), "negative");
    const auto pos = with_class(lane->FirstChildElement(), "positive");
    if (name == "shading_pct") {
      EXPECT_FALSE(neg.empty());
      EXPECT_TRUE(pos.empty());
      for (const auto* bar : neg)
        EXPECT_NE(std::string(bar->Attribute("fill")).find("url(#"), std::string::npos);
    }
    if (name == "light_hours") {
      EXPECT_TRUE(neg.empty());
      EXPECT_FALSE(pos.empty());
    }
  }
}

TEST(ActivityLanes, PenaltyAxisTicksAreMonotoneInTheChosenDirection) {
  const auto& d = demo();
  for (bool log : {true, false})
    for (bool decreasing : {true, false}) {
      kc::ChartOptions o;
      o.log_penalty = log;
      o.decreasing_penalty_left_to_right = decreasing;
      auto p = parse(kc::activity_lanes_svg(d.chart, o));
      ASSERT_EQ(p->error, tinyxml2::XML_SUCCESS);
      const auto ticks = x_ticks(p->doc.RootElement());
      ASSERT_GE(ticks.size(), 3u);
      for (std::size_t i = 1; i < ticks.size(); ++i) {
        if (decreasing)
          EXPECT_LT(ticks[i].second, ticks[i - 1].second) << "log=" << log;
        else
          EXPECT_GT(ticks[i].second, ticks[i - 1].second) << "log=" << log;
      }
      // A completed path on a log axis shows penalty 0 beyond a break.
      EXPECT_EQ(!with_class(p->doc.RootElement(), "zero").empty(), log);
      // The axis title says which way the penalty runs.
      EXPECT_NE(std::string(kc::activity_lanes_svg(d.chart, o))
                    .find(decreasing ? "decreasing to the right" : "increasing to the right"),
                std::string::npos);
      expect_inside_view_box(p->doc.RootElement());
    }
}

TEST(ActivityLanes, ManyPredictorsShowTheFirstNAndCountTheRest) {
  const auto& w = wide();
  const auto order = entry_order(w.path);
  ASSERT_GT(order.size(), 30u) << "the wide problem should activate many predictors";
  kc::ChartOptions o;
  o.max_predictors = 25;
  const std::string svg = kc::activity_lanes_svg(w.chart, o);
  auto p = parse(svg);
  ASSERT_EQ(p->error, tinyxml2::XML_SUCCESS);
  const auto lanes = with_class(p->doc.RootElement(), "lane");
  ASSERT_EQ(lanes.size(), 25u);
  for (std::size_t i = 0; i < lanes.size(); ++i)
    EXPECT_EQ(title_of(lanes[i]), "x" + std::to_string(order[i] + 1));
  EXPECT_NE(svg.find(std::to_string(order.size() - 25) + " later entrants hidden"),
            std::string::npos);
  expect_inside_view_box(p->doc.RootElement());
}

TEST(ActivityLanes, StoppedAndLeastAnglePathsAreDrawnHonestly) {
  const auto& d = demo();
  knotpath::TraceOptions stop;
  stop.max_knots = 5;
  const auto stopped = knotpath::trace<double>(d.data.x, d.data.y, stop);
  ASSERT_TRUE(stopped.stopped_early());
  const std::string svg = kc::activity_lanes_svg(kc::chart_path(stopped, d.data.predictor_names));
  auto p = parse(svg);
  ASSERT_EQ(p->error, tinyxml2::XML_SUCCESS);
  EXPECT_EQ(with_class(p->doc.RootElement(), "lane").size(), entry_order(stopped).size());
  // No penalty-0 slot for a path that never reached 0, and the note says why it ended.
  EXPECT_TRUE(with_class(p->doc.RootElement(), "zero").empty());
  EXPECT_NE(svg.find("stopped early (stop-max-knots)"), std::string::npos);
  expect_inside_view_box(p->doc.RootElement());

  knotpath::TraceOptions lar;
  lar.variant = knotpath::Variant::least_angle;
  const auto angle = knotpath::trace<double>(wide().problem.x, wide().problem.y, lar);
  kc::ChartOptions o;
  o.max_predictors = 200;
  auto q = parse(kc::activity_lanes_svg(kc::chart_path(angle), o));
  ASSERT_EQ(q->error, tinyxml2::XML_SUCCESS);
  EXPECT_EQ(with_class(q->doc.RootElement(), "lane").size(), entry_order(angle).size());
  EXPECT_TRUE(with_class(q->doc.RootElement(), "leave").empty());  // least angle: no exits
  expect_inside_view_box(q->doc.RootElement());
}

TEST(ActivityLanes, RejectsAPathWhoseNamesDoNotCoverItsPredictors) {
  kc::ChartPath bad = demo().chart;
  bad.names.resize(2);
  EXPECT_THROW(kc::activity_lanes_svg(bad), knotpath::invalid_option);
  bad = demo().chart;
  std::swap(bad.knots[1], bad.knots[2]);  // penalties no longer non-increasing
  EXPECT_THROW(kc::coefficient_traces_svg(bad), knotpath::invalid_option);
}

// ---------------------------------------------------------- chart 2: traces

TEST(CoefficientTraces, OneLabelledTracePerShownPredictorWithoutOverlap) {
  const auto& w = wide();
  const auto order = entry_order(w.path);
  for (kc::HorizontalAxis axis : {kc::HorizontalAxis::penalty, kc::HorizontalAxis::l1_budget}) {
    kc::ChartOptions o;
    o.max_predictors = 40;
    o.axis = axis;
    auto p = parse(kc::coefficient_traces_svg(w.chart, o));
    ASSERT_EQ(p->error, tinyxml2::XML_SUCCESS) << p->doc.ErrorStr();
    const auto* root = p->doc.RootElement();
    const auto traces = with_class(root, "trace");
    ASSERT_EQ(traces.size(), std::min<std::size_t>(40, order.size()));
    // Labels: at least 12 units apart vertically (font size 11; the
    // spreading keeps 13, minus 0.01 rounding of the written coordinates).
    std::vector<double> ys;
    for (const auto* t : traces) ys.push_back(t->FirstChildElement("text")->DoubleAttribute("y"));
    std::sort(ys.begin(), ys.end());
    for (std::size_t i = 1; i < ys.size(); ++i) EXPECT_GE(ys[i] - ys[i - 1], 12.0);
    // The hidden entrants are drawn grey, unlabelled.
    const auto hidden = with_class(root, "hidden-traces");
    ASSERT_EQ(hidden.size(), 1u);
    std::size_t grey = 0;
    for (const auto* e = hidden[0]->FirstChildElement("polyline"); e;
         e = e->NextSiblingElement("polyline"))
      ++grey;
    EXPECT_EQ(grey, order.size() - 40);
    expect_inside_view_box(root);
  }
}

TEST(CoefficientTraces, KnotsAreMarkedAndTheEndValuesMatchThePath) {
  const auto& d = demo();
  kc::ChartOptions o;
  o.coefficient_scale = kc::CoefficientScale::original;
  o.log_penalty = false;
  auto p = parse(kc::coefficient_traces_svg(d.chart, o));
  ASSERT_EQ(p->error, tinyxml2::XML_SUCCESS);
  const auto* root = p->doc.RootElement();
  // Entry and exit markers: one per event of the shown predictors; the
  // demo path has few knots, so the other knots are dots on the traces.
  std::size_t enters = 0, leaves = 0;
  for (const auto& k : d.path.knots()) {
    enters += k.event == knotpath::EventKind::enter;
    leaves += k.event == knotpath::EventKind::leave;
  }
  EXPECT_EQ(with_class(root, "enter").size(), enters);
  EXPECT_EQ(with_class(root, "leave").size(), leaves);
  EXPECT_GT(with_class(root, "knot-dot").size(), d.path.knots().size());
  expect_inside_view_box(root);
}

// The plotting frame of a traces chart: (top, bottom) of its first rect.
std::pair<double, double> plot_frame(const tinyxml2::XMLElement* svg) {
  const tinyxml2::XMLElement* frame = nullptr;
  walk(svg->FirstChildElement(), [&](const tinyxml2::XMLElement* e) {
    if (!frame && std::string(e->Name()) == "rect" && e->DoubleAttribute("height") > 100) frame = e;
  });
  if (!frame) return {0, 0};
  return {frame->DoubleAttribute("y"),
          frame->DoubleAttribute("y") + frame->DoubleAttribute("height")};
}

// Issue 19, point 4: the budget chart (and the penalty chart, drawn by the
// same code) has a look of our own: no dashed line across the plot at every
// knot and no row of knot ticks along its top edge. The only lines across
// the plot are the grid lines of the labelled axis ticks; nothing is drawn
// between the heading and the frame. The knots stay marked on the curves:
// every entry and exit has its ring, on hidden traces too.
TEST(CoefficientTraces, KnotsAreMarkedOnTheCurvesNotByLinesOrATickRow) {
  const auto check = [](const kc::ChartPath& chart, std::size_t max_predictors,
                        const knotpath::Path<double>& path) {
    for (kc::HorizontalAxis axis : {kc::HorizontalAxis::l1_budget, kc::HorizontalAxis::penalty}) {
      kc::ChartOptions o;
      o.axis = axis;
      o.max_predictors = max_predictors;
      auto p = parse(kc::coefficient_traces_svg(chart, o));
      ASSERT_EQ(p->error, tinyxml2::XML_SUCCESS) << p->doc.ErrorStr();
      const auto* root = p->doc.RootElement();
      EXPECT_TRUE(with_class(root, "knot").empty());
      // Plain copies, not a structured binding: the lambda below uses them,
      // which Clang 14 (the sanitizer build) refuses for bindings.
      const auto frame = plot_frame(root);
      const double top = frame.first, bottom = frame.second;
      ASSERT_LT(top, bottom);
      std::vector<double> tick_x;
      for (const auto& [x, v] : x_ticks(root)) tick_x.push_back(x);
      std::size_t vertical = 0;
      walk(root->FirstChildElement(), [&](const tinyxml2::XMLElement* e) {
        if (std::string(e->Name()) != "line") return;
        EXPECT_EQ(e->Attribute("stroke-dasharray"), nullptr);
        const double x1 = e->DoubleAttribute("x1"), x2 = e->DoubleAttribute("x2");
        const double y1 = e->DoubleAttribute("y1"), y2 = e->DoubleAttribute("y2");
        EXPECT_GE(std::min(y1, y2), top - 0.011) << "a line above the plot at x " << x1;
        if (x1 != x2 || std::fabs(y2 - y1) < (bottom - top) / 2) return;
        ++vertical;  // across the plot: only at a labelled tick of the axis
        EXPECT_TRUE(std::any_of(tick_x.begin(), tick_x.end(),
                                [&](double t) { return std::fabs(t - x1) < 0.011; }))
            << "a line across the plot at x " << x1 << " is no axis tick";
      });
      EXPECT_LE(vertical, tick_x.size() + 1);  // + the zero slot of a log axis
      std::size_t enters = 0;
      for (const auto& k : path.knots()) enters += k.event == knotpath::EventKind::enter;
      EXPECT_EQ(with_class(root, "enter").size(), enters);
    }
  };
  check(demo().chart, 25, demo().path);
  check(wide().chart, 20, wide().path);  // many knots, hidden traces: rings only
}

// --------------------------------------------------------- chart 3: selection

TEST(SelectionChart, MarksMinimizerAndOneSeChoiceInPenaltyOrder) {
  const kc::SelectionCurve curve = small_curve();
  for (bool decreasing : {true, false}) {
    kc::ChartOptions o;
    o.decreasing_penalty_left_to_right = decreasing;
    auto p = parse(kc::selection_curve_svg(curve, o));
    ASSERT_EQ(p->error, tinyxml2::XML_SUCCESS) << p->doc.ErrorStr();
    const auto* root = p->doc.RootElement();
    const auto mins = with_class(root, "minimizer");
    const auto ones = with_class(root, "one-se");
    ASSERT_EQ(mins.size(), 1u);
    ASSERT_EQ(ones.size(), 1u);
    const double xm = mins[0]->FirstChildElement("line")->DoubleAttribute("x1");
    const double xo = ones[0]->FirstChildElement("line")->DoubleAttribute("x1");
    // one_se (0.3) is a larger penalty than the minimizer (0.1).
    if (decreasing)
      EXPECT_LT(xo, xm);
    else
      EXPECT_GT(xo, xm);
    EXPECT_EQ(with_class(root, "se-band").size(), 1u);
    EXPECT_EQ(with_class(root, "criterion").size(), 2u);
    const auto ticks = x_ticks(root);
    ASSERT_GE(ticks.size(), 3u);
    for (std::size_t i = 1; i < ticks.size(); ++i)
      EXPECT_TRUE(decreasing ? ticks[i].second < ticks[i - 1].second
                             : ticks[i].second > ticks[i - 1].second);
    expect_inside_view_box(root);
  }
}

TEST(SelectionChart, RejectsBrokenInput) {
  kc::SelectionCurve empty;
  EXPECT_THROW(kc::selection_curve_svg(empty), knotpath::invalid_option);
  kc::SelectionCurve nan = small_curve();
  nan.points[3].mean_error = std::nan("");
  EXPECT_THROW(kc::selection_curve_svg(nan), knotpath::invalid_option);
  kc::ChartOptions o;
  o.id_prefix = "1bad";
  EXPECT_THROW(kc::activity_lanes_svg(demo().chart, o), knotpath::invalid_option);
  o = {};
  o.width = 10;
  EXPECT_THROW(kc::coefficient_traces_svg(demo().chart, o), knotpath::invalid_option);
}

// ------------------------------------------------ the size-free penalty mu

// mu = lambda / sqrt(n) on standardized columns and lambda / n on the
// columns' own scale (DESIGN.md, "Comparing penalties across data sets of
// different size"); n = 240 rows of the demo, unweighted.
struct MuCase {
  bool standardize;
  const char* definition;  // what the axis title must say
  double divisor;          // computed here, not by the library
};

std::vector<MuCase> mu_cases(double n) {
  return {{true, "\xCE\xBC = \xCE\xBB/\xE2\x88\x9An", std::sqrt(n)},
          {false, "\xCE\xBC = \xCE\xBB/n", n}};
}

// The "enters at" value of a lane: its last text, "mu VALUE".
double lane_entry_value(const tinyxml2::XMLElement* lane) {
  const tinyxml2::XMLElement* last = nullptr;
  for (const auto* t = lane->FirstChildElement("text"); t; t = t->NextSiblingElement("text"))
    last = t;
  if (!last || !last->GetText()) return std::nan("");
  const std::string text = last->GetText();
  const std::string mu = "\xCE\xBC ";
  if (text.rfind(mu, 0) != 0) return std::nan("");
  return std::strtod(text.c_str() + mu.size(), nullptr);
}

TEST(ChartMu, PenaltyAxisFollowsTheScalingOfThePath) {
  const auto& d = demo();
  const double n = static_cast<double>(d.data.x.rows());
  ASSERT_GT(n, 4.0) << "sqrt(n) and n must differ for this test to tell them apart";
  for (const MuCase& c : mu_cases(n)) {
    knotpath::TraceOptions options;
    options.standardize = c.standardize;
    const auto path = knotpath::trace<double>(d.data.x, d.data.y, options);
    const kc::ChartPath chart = kc::chart_path(path, d.data.predictor_names, d.data.response_name);
    const double lambda_max = path.knots().front().penalty;
    const double mu_max = lambda_max / c.divisor;
    kc::ChartOptions o;
    o.penalty_unit = kc::PenaltyUnit::mu;
    o.log_penalty = false;
    const std::string svg = kc::activity_lanes_svg(chart, o);
    auto p = parse(svg);
    ASSERT_EQ(p->error, tinyxml2::XML_SUCCESS) << p->doc.ErrorStr();
    const auto* root = p->doc.RootElement();
    EXPECT_NE(svg.find(c.definition), std::string::npos) << "standardize=" << c.standardize;
    // The first entrant enters at lambda_max; the label has 4 significant
    // digits, so a relative 1e-3 holds it.
    const auto lanes = with_class(root, "lane");
    ASSERT_FALSE(lanes.empty());
    EXPECT_NEAR(lane_entry_value(lanes.front()), mu_max, 1e-3 * mu_max)
        << "standardize=" << c.standardize;
    // A linear axis runs from 0 to a little (4 %) beyond the largest mu; its
    // round-number ticks (steps 1, 2, 5 x 10^k, about 7 of them) reach at
    // least half of it.
    const auto ticks = x_ticks(root);
    ASSERT_GE(ticks.size(), 3u);
    double top_tick = 0;
    for (const auto& t : ticks) top_tick = std::max(top_tick, t.second);
    EXPECT_LE(top_tick, 1.04 * mu_max * (1 + 1e-9)) << "standardize=" << c.standardize;
    EXPECT_GE(top_tick, 0.5 * mu_max) << "standardize=" << c.standardize;
    // The traces share the axis.
    EXPECT_NE(kc::coefficient_traces_svg(chart, o).find(c.definition), std::string::npos);
  }
}

TEST(ChartMu, ReportAuditColumnFollowsTheScalingOfThePath) {
  const auto& d = demo();
  const double n = static_cast<double>(d.data.x.rows());
  for (const MuCase& c : mu_cases(n)) {
    knotpath::TraceOptions options;
    options.standardize = c.standardize;
    const auto path = knotpath::trace<double>(d.data.x, d.data.y, options);
    const std::string html = kc::report_html(kc::chart_path(path, d.data.predictor_names), {});
    auto p = parse(html);
    ASSERT_EQ(p->error, tinyxml2::XML_SUCCESS) << p->doc.ErrorStr();
    const tinyxml2::XMLElement* audit = nullptr;
    walk(p->doc.RootElement(), [&](const tinyxml2::XMLElement* e) {
      if (std::string(e->Name()) == "table" && has_class(e, "audit")) audit = e;
    });
    ASSERT_NE(audit, nullptr);
    // Columns: step, penalty, mu, ...
    const auto* th =
        audit->FirstChildElement("thead")->FirstChildElement("tr")->FirstChildElement("th");
    th = th->NextSiblingElement("th")->NextSiblingElement("th");
    ASSERT_NE(th, nullptr);
    EXPECT_STREQ(th->GetText(), c.definition);
    const auto* td =
        audit->FirstChildElement("tbody")->FirstChildElement("tr")->FirstChildElement("td");
    td = td->NextSiblingElement("td")->NextSiblingElement("td");
    ASSERT_NE(td, nullptr);
    const double mu_max = path.knots().front().penalty / c.divisor;
    // Written with 6 significant digits: a relative 1e-5 holds it.
    EXPECT_NEAR(std::strtod(td->GetText(), nullptr), mu_max, 1e-5 * mu_max)
        << "standardize=" << c.standardize;
  }
}

TEST(ChartMu, SelectionAxisTitleFollowsTheScalingOfThePath) {
  const auto& d = demo();
  for (const MuCase& c : mu_cases(static_cast<double>(d.data.x.rows()))) {
    knotpath::TraceOptions options;
    options.standardize = c.standardize;
    knotpath::CrossValidationOptions cv_options;
    cv_options.folds = 4;
    const auto cv = knotpath::cross_validate<double>(d.data.x, d.data.y, options, cv_options);
    const kc::SelectionCurve curve = kc::selection_curve(cv);
    EXPECT_EQ(curve.standardized, c.standardize);
    const std::string svg = kc::selection_curve_svg(curve);
    EXPECT_NE(svg.find(c.definition), std::string::npos) << "standardize=" << c.standardize;
  }
}

// The one-standard-error threshold line is drawn at the least error plus
// the standard error at the minimizer itself (the one that sets the rule),
// not at the curve point drawn nearest to it.
TEST(ChartSelection, ThresholdUsesTheStandardErrorAtTheMinimum) {
  const auto& d = demo();
  knotpath::CrossValidationOptions cv_options;
  cv_options.folds = 4;
  const auto cv = knotpath::cross_validate<double>(d.data.x, d.data.y, {}, cv_options);
  kc::SelectionCurve curve = kc::selection_curve(cv);
  EXPECT_EQ(curve.threshold_standard_error, cv.minimum.standard_error);
  auto threshold_line = [](const std::string& svg) {
    const auto at = svg.find("one-se-threshold");
    return at == std::string::npos ? std::string() : svg.substr(svg.rfind('<', at), 200);
  };
  const std::string drawn = threshold_line(kc::selection_curve_svg(curve));
  ASSERT_FALSE(drawn.empty());
  curve.threshold_standard_error *= 2;  // the line follows the field
  EXPECT_NE(threshold_line(kc::selection_curve_svg(curve)), drawn);
}

// ------------------------------------------------------------ chart 4: report

TEST(Report, ParsesEmbedsEveryChartAndReferencesNothingOutside) {
  const auto& d = demo();
  const kc::SelectionCurve curve = small_curve();
  kc::ReportOptions ro;
  ro.title = "demo <report> & test";  // must be escaped
  ro.summary = {{"data", "demo"}};
  const std::string html = kc::report_html(d.chart, ro, &curve);
  ASSERT_EQ(html.rfind("<!DOCTYPE html>", 0), 0u);
  auto p = parse(html);
  ASSERT_EQ(p->error, tinyxml2::XML_SUCCESS) << p->doc.ErrorStr();
  const auto* root = p->doc.RootElement();
  EXPECT_STREQ(root->Name(), "html");
  std::size_t svgs = 0, audit_rows = 0;
  std::set<std::string> ids;
  walk(root, [&](const tinyxml2::XMLElement* e) {
    const std::string name = e->Name();
    svgs += name == "svg";
    // No scripts, external style sheets, frames, images or objects.
    for (const char* banned :
         {"script", "link", "img", "iframe", "object", "embed", "image", "use"})
      EXPECT_NE(name, banned);
    for (const auto* a = e->FirstAttribute(); a; a = a->Next()) {
      const std::string an = a->Name(), av = a->Value();
      if (an == "href" || an == "xlink:href" || an == "src") {
        EXPECT_EQ(av.rfind("#", 0), 0u) << av;
      }
      if (an.rfind("on", 0) == 0) ADD_FAILURE() << "event handler attribute " << an;
      if (av.find("url(") != std::string::npos) {
        EXPECT_NE(av.find("url(#"), std::string::npos) << av;
      }
      if (an == "id") {
        EXPECT_TRUE(ids.insert(av).second) << "duplicate id " << av;
      }
    }
    if (name == "style" && e->GetText()) {
      const std::string css = e->GetText();
      EXPECT_EQ(css.find("@import"), std::string::npos);
      EXPECT_EQ(css.find("@font-face"), std::string::npos);
      EXPECT_EQ(css.find("url("), std::string::npos);
    }
    if (name == "table" && has_class(e, "audit")) {
      const auto* body = e->FirstChildElement("tbody");
      for (const auto* r = body->FirstChildElement("tr"); r; r = r->NextSiblingElement("tr"))
        ++audit_rows;
    }
  });
  EXPECT_EQ(svgs, 4u);  // activity, traces, budget traces, selection
  EXPECT_EQ(audit_rows, d.path.knots().size());
  EXPECT_STREQ(root->FirstChildElement("head")->FirstChildElement("title")->GetText(),
               "demo <report> & test");
}

// ReportOptions::tables: each under its heading, cells escaped and in
// order, marked rows highlighted with their meaning, a section without
// columns shows only its sentences; a row of the wrong width, a marked row
// out of range, a bad or repeated id are refused before anything is written.
TEST(Report, TablesOfNumbersAreShownAsGiven) {
  const auto& d = demo();
  kc::ReportOptions ro;
  kc::ReportTable numbers;
  numbers.heading = "Numbers & more";
  numbers.id = "numbers";
  numbers.lead = {"Two rows <of> numbers."};
  numbers.columns = {"name", "value"};
  numbers.rows = {{"a<b", "1.5"}, {"c", "-2"}};
  numbers.marked_rows = {1};
  numbers.marked_meaning = "Highlighted: the least.";
  numbers.notes = {"a note"};
  kc::ReportTable words;
  words.heading = "Only words";
  words.id = "words";
  words.lead = {"Not computed: no reason."};
  ro.tables = {numbers, words};
  const std::string html = kc::report_html(d.chart, ro);
  auto p = parse(html);
  ASSERT_EQ(p->error, tinyxml2::XML_SUCCESS) << p->doc.ErrorStr();
  const tinyxml2::XMLElement* table = nullptr;
  walk(p->doc.RootElement(), [&](const tinyxml2::XMLElement* e) {
    if (e->Attribute("id") && std::string(e->Attribute("id")) == "kp-numbers") table = e;
  });
  ASSERT_NE(table, nullptr);
  std::vector<std::string> cells;
  walk(table->FirstChildElement(), [&](const tinyxml2::XMLElement* e) {
    if (std::string(e->Name()) == "td" || std::string(e->Name()) == "th")
      cells.push_back(e->GetText() ? e->GetText() : "");
  });
  EXPECT_EQ(cells, (std::vector<std::string>{"name", "value", "a<b", "1.5", "c", "-2"}));
  EXPECT_NE(html.find("<h2>Numbers &amp; more</h2>\n<p>Two rows &lt;of&gt; numbers.</p>"),
            std::string::npos);
  EXPECT_NE(html.find("<tr class=\"marked\"><td class=\"text\">c</td><td>-2</td></tr>"),
            std::string::npos);
  EXPECT_NE(html.find("Highlighted: the least."), std::string::npos);
  EXPECT_NE(html.find("<h2>Only words</h2>\n<p>Not computed: no reason.</p>\n<h2>Audit"),
            std::string::npos);
  // The tables come after the charts and before the audit of events.
  EXPECT_LT(html.find("<h2>Coefficients</h2>"), html.find("<h2>Numbers &amp; more</h2>"));

  auto refused = [&](const std::function<void(kc::ReportOptions&)>& spoil) {
    kc::ReportOptions bad = ro;
    spoil(bad);
    EXPECT_THROW(kc::report_html(d.chart, bad), knotpath::invalid_option);
  };
  refused([](kc::ReportOptions& o) { o.tables[0].rows[1].pop_back(); });
  refused([](kc::ReportOptions& o) { o.tables[0].marked_rows = {2}; });
  refused([](kc::ReportOptions& o) { o.tables[0].id = "9 lives"; });
  refused([](kc::ReportOptions& o) { o.tables[1].id = "numbers"; });
  refused([](kc::ReportOptions& o) { o.tables[0].text_columns = {true}; });
  refused([](kc::ReportOptions& o) { o.tables[1].rows = {{}}; });
}

TEST(Report, WriteReportWritesEveryFile) {
  const auto dir = std::filesystem::temp_directory_path() / "knotpath_test_charts_report";
  std::filesystem::remove_all(dir);
  const kc::SelectionCurve curve = small_curve();
  const auto files = kc::write_report(dir, demo().chart, {}, &curve);
  ASSERT_EQ(files.size(), 5u);
  for (const auto& f : files) {
    ASSERT_TRUE(std::filesystem::exists(f)) << f;
    std::ifstream in(f);
    std::stringstream text;
    text << in.rdbuf();
    auto p = parse(text.str());
    EXPECT_EQ(p->error, tinyxml2::XML_SUCCESS) << f << ": " << p->doc.ErrorStr();
  }
  std::filesystem::remove_all(dir);
}

// ------------------------------------------------------------- render check

bool have_rsvg() {
  return std::system("command -v rsvg-convert >/dev/null 2>&1") == 0;
}

// Grey levels of a PNG, via libpng's simplified reading interface.
std::vector<unsigned char> read_grey_png(const std::filesystem::path& file, unsigned& width,
                                         unsigned& height) {
  png_image image{};
  image.version = PNG_IMAGE_VERSION;
  if (!png_image_begin_read_from_file(&image, file.c_str())) return {};
  image.format = PNG_FORMAT_GRAY;
  std::vector<unsigned char> pixels(PNG_IMAGE_SIZE(image));
  if (!png_image_finish_read(&image, nullptr, pixels.data(), 0, nullptr)) return {};
  width = image.width;
  height = image.height;
  return pixels;
}

TEST(RenderCheck, EveryChartRendersToANonBlankPng) {
  if (!have_rsvg())
    GTEST_SKIP() << "rsvg-convert not found (Debian package librsvg2-bin); render check skipped";
  const auto dir = std::filesystem::temp_directory_path() / "knotpath_test_charts_render";
  std::filesystem::remove_all(dir);
  std::filesystem::create_directories(dir);
  const kc::SelectionCurve curve = small_curve();
  kc::ChartOptions wide_options;
  wide_options.max_predictors = 30;
  const std::vector<std::pair<std::string, std::string>> charts = {
      {"activity", kc::activity_lanes_svg(demo().chart)},
      {"traces", kc::coefficient_traces_svg(demo().chart)},
      {"wide_activity", kc::activity_lanes_svg(wide().chart, wide_options)},
      {"wide_traces", kc::coefficient_traces_svg(wide().chart, wide_options)},
      {"selection", kc::selection_curve_svg(curve)},
  };
  for (const auto& [name, svg] : charts) {
    const auto in = dir / (name + ".svg"), out = dir / (name + ".png");
    std::ofstream(in) << svg;
    const std::string cmd = "rsvg-convert -o '" + out.string() + "' '" + in.string() + "'";
    ASSERT_EQ(std::system(cmd.c_str()), 0) << cmd;
    unsigned w = 0, h = 0;
    const auto grey = read_grey_png(out, w, h);
    ASSERT_FALSE(grey.empty()) << "libpng could not decode " << out;
    auto p = parse(svg);
    // rsvg-convert renders at the SVG's width and height (1 px per unit).
    EXPECT_EQ(w,
              static_cast<unsigned>(std::lround(p->doc.RootElement()->DoubleAttribute("width"))));
    double mean = 0;
    std::size_t dark = 0;
    for (unsigned char g : grey) {
      mean += g;
      dark += g < 128;
    }
    mean /= static_cast<double>(grey.size());
    double var = 0;
    for (unsigned char g : grey) var += (g - mean) * (g - mean);
    var /= static_cast<double>(grey.size());
    // A blank (all white) render has variance 0 and no dark pixel. Text,
    // bars and lines darken a few percent of the area; 0.5% dark pixels and
    // a standard deviation of 10 grey levels are far below any real chart
    // (common practice for a smoke test; the demo charts measure several
    // times more) and far above a blank or near-blank picture.
    EXPECT_GT(std::sqrt(var), 10.0) << name;
    EXPECT_GT(static_cast<double>(dark) / static_cast<double>(grey.size()), 0.005) << name;
  }
  std::filesystem::remove_all(dir);
}

// Issue 18, point 7: the report's notes list each collinear column, but the
// predictors held out after saturation (p > n: most of them, at rounding-level
// penalties) in one note with their count. Before, one note each, worded "as
// collinear" though saturation, not collinearity, kept them out.
TEST(ChartData, HeldOutAfterSaturationIsOneNote) {
  const auto prob = knotpath::testing::ar1_problem(12, 40, 0.2, 7, 3);
  const auto path = knotpath::trace<double>(prob.x, prob.y);
  std::set<Index> saturated;
  for (const auto& h : path.held_out())
    if (h.saturated) saturated.insert(h.predictor);
  ASSERT_GE(saturated.size(), 2u);
  const kc::ChartPath chart = kc::chart_path(path);
  std::size_t held_notes = 0;
  for (const auto& note : chart.notes)
    if (note.find("held out") != std::string::npos) ++held_notes;
  EXPECT_EQ(held_notes, 1u);
  ASSERT_FALSE(chart.notes.empty());
  EXPECT_EQ(chart.notes.back().rfind(std::to_string(saturated.size()) + " predictors held out after", 0),
            0u)
      << chart.notes.back();
}

}  // namespace

// Chart 5: one row per predictor with an adjusted and a naive bar on a
// shared axis in standard errors, the bar's ends at value / SE, an arrow
// where an interval is unbounded, and a well-formed document.
TEST(AdjustedIntervals, OneRowPerPredictorWithBarsInStandardErrorsAndArrowsWhenUnbounded) {
  kc::AdjustedIntervals a;
  a.level = 0.9;
  kc::IntervalPanel panel;
  panel.heading = "at the least CV error";
  panel.rows.push_back({"dose", 2.0, 0.5, 0.4, 3.1, 1.18, 2.82, 0.03, 1e-4});
  panel.rows.push_back({"age", -0.3, 0.1, -std::numeric_limits<double>::infinity(), 0.2, -0.46, -0.14, 0.4, 0.002});
  a.panels.push_back(panel);
  const std::string svg = kc::adjusted_intervals_svg(a);
  auto p = parse(svg);
  ASSERT_EQ(p->error, tinyxml2::XML_SUCCESS) << svg;
  const auto rows = with_class(p->doc.RootElement(), "interval-row");
  ASSERT_EQ(rows.size(), 2u);
  EXPECT_NE(title_of(rows[0]).find("dose"), std::string::npos);
  const auto adjusted = with_class(p->doc.RootElement(), "adjusted");
  const auto naive = with_class(p->doc.RootElement(), "naive");
  ASSERT_EQ(adjusted.size(), 2u);
  ASSERT_EQ(naive.size(), 2u);
  // The naive bar of "dose" spans (2.82 - 1.18) / 0.5 = 3.28 SE, the
  // adjusted one (3.1 - 0.4) / 0.5 = 5.4 SE: their pixel lengths keep that ratio.
  auto length = [](const tinyxml2::XMLElement* e) { return e->DoubleAttribute("x2") - e->DoubleAttribute("x1"); };
  EXPECT_NEAR(length(adjusted[0]) / length(naive[0]), 5.4 / 3.28, 0.01);  // coordinates rounded to 0.01 px
  // The unbounded lower end of "age" ends in an arrow (a polygon in its row).
  int arrows = 0;
  walk(rows[1]->FirstChildElement(), [&](const tinyxml2::XMLElement* e) { arrows += std::string(e->Name()) == "polygon"; });
  EXPECT_EQ(arrows, 1);
  kc::AdjustedIntervals empty;
  EXPECT_THROW(kc::adjusted_intervals_svg(empty), knotpath::invalid_option);
}
