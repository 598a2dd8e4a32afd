// External check: solutions read off the traced path, verified by KKT, agree
// with a general-purpose convex quadratic-programming solver at 20 penalties
// on 3 designs (weights; sign constraints; elastic net).
//
// Reference solver: CVXOPT's cvxopt.solvers.qp (primal-dual interior-point
// method; Debian package python3-cvxopt), run by tests/qp_reference.py with
// /usr/bin/python3 on the lasso written as a QP in split variables
// b = b+ - b-. Data are exchanged through temporary files.

#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include <knotpath/knotpath.hpp>

#include "test_support.hpp"

namespace {

using knotpath::Index;
using knotpath::Matrix;
using knotpath::SignConstraint;
using knotpath::TraceOptions;
using knotpath::Vector;
namespace kt = knotpath::testing;
namespace fs = std::filesystem;

const char* kPython = "/usr/bin/python3";

bool cvxopt_available() {
  const std::string cmd = std::string(kPython) + " -c \"import cvxopt, numpy\" > /dev/null 2>&1";
  return std::system(cmd.c_str()) == 0;
}

#define KNOTPATH_REQUIRE_CVXOPT()                                                                  \
  if (!cvxopt_available())                                                                         \
  GTEST_SKIP() << "/usr/bin/python3 cannot import cvxopt (install the Debian package "            \
                  "python3-cvxopt); the external QP check is skipped"

struct Case {
  kt::Problem prob;
  TraceOptions options;
  Vector<double> weights;
};

// Runs the QP reference on the prepared problem at the given penalties and
// returns one coefficient vector per penalty (prepared scale).
std::vector<Vector<double>> qp_solutions(const Matrix<double>& z, const Vector<double>& y,
                                         const std::vector<double>& factors, double ridge,
                                         const std::vector<int>& signs, const std::vector<double>& penalties) {
  const fs::path dir = fs::temp_directory_path();
  std::random_device rd;
  const std::string stem = "knotpath_qp_" + std::to_string(rd()) + "_" + std::to_string(rd());
  const fs::path in = dir / (stem + ".in"), out = dir / (stem + ".out");
  {
    std::ofstream f(in);
    f.precision(17);
    f << z.rows() << ' ' << z.cols() << ' ' << ridge << ' ' << penalties.size() << '\n';
    for (Index i = 0; i < z.rows(); ++i) {
      for (Index j = 0; j < z.cols(); ++j) f << z(i, j) << ' ';
      f << '\n';
    }
    for (Index i = 0; i < y.size(); ++i) f << y(i) << ' ';
    f << '\n';
    for (Index j = 0; j < z.cols(); ++j) f << (factors.empty() ? 1.0 : factors[static_cast<std::size_t>(j)]) << ' ';
    f << '\n';
    for (Index j = 0; j < z.cols(); ++j) f << (signs.empty() ? 0 : signs[static_cast<std::size_t>(j)]) << ' ';
    f << '\n';
    for (double l : penalties) f << l << ' ';
    f << '\n';
  }
  const std::string cmd = std::string(kPython) + " \"" + KNOTPATH_SOURCE_DIR + "/tests/qp_reference.py\" \"" +
                          in.string() + "\" \"" + out.string() + "\"";
  const int rc = std::system(cmd.c_str());
  std::vector<Vector<double>> result;
  std::ifstream g(out);
  std::string line;
  while (rc == 0 && std::getline(g, line)) {
    std::istringstream ss(line);
    std::string status;
    ss >> status;
    EXPECT_EQ(status, "optimal");
    Vector<double> b(z.cols());
    for (Index j = 0; j < z.cols(); ++j) ss >> b(j);
    result.push_back(b);
  }
  fs::remove(in);
  fs::remove(out);
  EXPECT_EQ(rc, 0) << cmd;
  return result;
}

void check_against_qp(const Case& c) {
  const TraceOptions& o = c.options;
  const auto path = knotpath::trace<double>(c.prob.x, c.prob.y, o, c.weights);
  kt::Centred cen = kt::centre(c.prob.x, c.prob.y, o.with_intercept, o.standardize, c.weights);
  std::vector<int> signs;
  for (Index j = 0; j < c.prob.x.cols(); ++j) {
    const SignConstraint s = o.sign_constraint(static_cast<std::size_t>(j));
    signs.push_back(s == SignConstraint::nonnegative ? 1 : s == SignConstraint::nonpositive ? -1 : 0);
  }
  // 20 penalties spread over (0, lambda_max): 5% to 95% of lambda_max (the QP
  // solver's relative accuracy degrades as the penalty term vanishes).
  std::vector<double> penalties;
  for (int i = 0; i < 20; ++i) penalties.push_back(path.lambda_max() * (0.05 + 0.9 * i / 19.0));
  const std::vector<double> weights = kt::penalty_weights(o, static_cast<std::size_t>(c.prob.x.cols()));
  const auto qp = qp_solutions(cen.z, cen.y, weights, o.ridge, signs, penalties);
  ASSERT_EQ(qp.size(), penalties.size());
  for (std::size_t i = 0; i < penalties.size(); ++i) {
    const Vector<double> b = kt::to_prepared(cen, path.at_penalty(penalties[i]).coefficients);
    // KKT of the stated objective first (1e-9 of lambda: double-precision
    // rounding on well-conditioned designs, see test_options.cpp).
    EXPECT_LE(kt::kkt_violation(cen.z, cen.y, b, penalties[i], weights, o.ridge, signs), 1e-9)
        << "penalty " << penalties[i];
    // Agreement with CVXOPT's cvxopt.solvers.qp to 1e-6 relative (the
    // issue's bound; the interior-point method, run to a 1e-12 gap, agrees to
    // ~2e-10 relative on these problems, so the bound has a wide margin).
    const double scale = std::max(1.0, qp[i].cwiseAbs().maxCoeff());
    EXPECT_LE((b - qp[i]).cwiseAbs().maxCoeff(), 1e-6 * scale)
        << "penalty " << penalties[i] << "\npath " << b.transpose() << "\nqp   " << qp[i].transpose();
  }
}

TEST(QpReference, WeightedLassoAgreesWithCvxopt) {
  KNOTPATH_REQUIRE_CVXOPT();
  Case c{kt::ar1_problem(40, 8, 0.5, 71), {}, {}};
  std::mt19937_64 gen(71);
  std::uniform_real_distribution<double> u(0.2, 3.0);
  c.weights.resize(40);
  for (Index i = 0; i < 40; ++i) c.weights(i) = u(gen);
  c.weights(3) = 0.0;  // a row the solution must ignore
  kt::set_penalty_weights(c.options, {1.0, 0.5, 2.0, 1.0, 1.0, 0.0, 1.0, 1.5});
  check_against_qp(c);
}

TEST(QpReference, SignConstrainedLassoAgreesWithCvxopt) {
  KNOTPATH_REQUIRE_CVXOPT();
  Case c{kt::ar1_problem(35, 10, 0.7, 72), {}, {}};
  c.options.sign_constraints = {SignConstraint::nonnegative};
  c.options.sign_constraints.resize(10, SignConstraint::nonnegative);
  c.options.sign_constraints[3] = SignConstraint::nonpositive;
  c.options.sign_constraints[6] = SignConstraint::none;
  check_against_qp(c);
}

TEST(QpReference, ElasticNetAgreesWithCvxopt) {
  KNOTPATH_REQUIRE_CVXOPT();
  Case c{kt::ar1_problem(15, 25, 0.6, 73), {}, {}};  // p > n: the ridge term keeps it strictly convex
  c.options.ridge = 2.0;
  check_against_qp(c);
}

}  // namespace
