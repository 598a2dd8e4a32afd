// Instantiates the selection-adjusted inference (adjusted_inference.hpp) in
// double and in 50-digit floats, for the strict-warnings check
// (tools/strict-headers.sh). Never run: compiling it is the test.
#include <boost/multiprecision/cpp_bin_float.hpp>
#include <boost/multiprecision/eigen.hpp>

#include <knotpath/adjusted_inference.hpp>
#include <knotpath/core.hpp>
#include <knotpath/demo.hpp>

template <class Scalar>
double run(const knotpath::Matrix<Scalar>& x, const knotpath::Vector<Scalar>& y) {
  const knotpath::Path<Scalar> path = knotpath::trace<Scalar>(x, y);
  const auto prepared = knotpath::prepare_dense<Scalar>(x, y, path.options());
  const auto at = knotpath::adjusted_inference_at_penalty(prepared, path, Scalar(path.lambda_max() / 2));
  const auto steps = knotpath::adjusted_inference_after_steps(prepared, path, 2);
  const auto entries = knotpath::entry_p_values(prepared.design, path, at.noise_variance, 3);
  std::vector<double> p;
  for (const auto& e : entries) p.push_back(e.p_value);
  const auto rule = knotpath::forward_stop(p, 0.1);
  return at.level + steps.noise_variance + static_cast<double>(rule.chosen);
}

int main() {
  using Big = boost::multiprecision::cpp_bin_float_50;
  const auto data = knotpath::demo::greenhouse();
  const double a = run<double>(data.x, data.y);
  const double b = run<Big>(data.x.cast<Big>(), data.y.cast<Big>());
  return a + b != a + b ? 1 : 0;
}
