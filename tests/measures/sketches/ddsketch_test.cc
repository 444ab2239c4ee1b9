// DDSketchState: the relative-error guarantee of Masson, Rim & Lee (2019),
// as stated in common/measures/sketches/ddsketch.h, checked against exact type-7
// quantiles (Hyndman & Fan 1996) on generated distributions; merges of
// splits must give identical buckets.
#include "common/measures/sketches/ddsketch.h"

#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>

#include "common/measures/exact_quantile.h"
#include "tests/measures/measure_test_util.h"

namespace fanfold {
namespace {

using testing::Rows;
using testing::TestLcg;

const std::vector<double> kProbabilities = {0,    0.001, 0.01, 0.1,  0.25,  0.3337, 0.5,
                                            0.75, 0.9,   0.99, 0.999, 0.9999, 1};

MeasureConfig SketchConfig(double alpha) {
  MeasureConfig c;
  c.kind = MeasureKind::kDdSketch;
  c.alpha = alpha;
  c.probabilities = kProbabilities;
  return c;
}

enum class Shape { kUniform, kExponential, kLognormal, kSignedWithZeros, kNarrowPositive };

double Draw(Shape shape, TestLcg& g) {
  const double u = g.Uniform();
  switch (shape) {
    case Shape::kUniform: return 1000 * u;
    case Shape::kExponential: return -100 * std::log1p(-u);
    case Shape::kLognormal: {
      const double v = g.Uniform();  // Box-Muller: a standard normal from (u, v)
      const double z = std::sqrt(-2 * std::log1p(-u)) * std::cos(2 * M_PI * v);
      return std::exp(3 * z);
    }
    case Shape::kSignedWithZeros: {
      const double w = g.Uniform();
      if (w < 0.1) return 0;
      const double magnitude = std::exp(8 * (u - 0.5));  // e^-4 .. e^4
      return w < 0.55 ? -magnitude : magnitude;
    }
    case Shape::kNarrowPositive: return 1 + 9 * u;
  }
  return 0;
}

// The documented guarantee: |E - Q| <= alpha ((1-f)|x(j)| + f|x(j+1)|), plus
// 1e-12 relative for rounding in the estimate and in the interpolation.
void CheckGuarantee(const DDSketchState& sketch, std::vector<double> values, double alpha) {
  std::sort(values.begin(), values.end());
  const size_t n = values.size();
  for (double p : kProbabilities) {
    const double h = static_cast<double>(n - 1) * p;
    const size_t j = std::min(static_cast<size_t>(std::floor(h)), n - 1);
    const size_t j1 = std::min(j + 1, n - 1);
    const double f = h - static_cast<double>(j);
    const double exact = Type7Quantile(values, p);
    const double got = sketch.Quantile(p);
    const double a = std::fabs(values[j]), b = std::fabs(values[j1]);
    const double bound = alpha * ((1 - f) * a + f * b) + 1e-12 * (a + b);
    INFO("p=" << p << " exact=" << exact << " got=" << got);
    CHECK(std::fabs(got - exact) <= bound);
    // Without a sign change between the neighbours that is alpha |Q|.
    if (!(values[j] < 0 && values[j1] > 0))
      CHECK(std::fabs(got - exact) <= alpha * std::fabs(exact) + 1e-12 * (a + b));
    if (p == 0) CHECK(got == values.front());  // exact min and max are kept
    if (p == 1) CHECK(got == values.back());
  }
}

// Intent: every requested quantile is within the documented bound of the
// exact type-7 quantile, for several shapes (negatives and zeros included)
// and accuracies.
TEST_CASE("ddsketch: relative-error guarantee on known distributions") {
  for (Shape shape : {Shape::kUniform, Shape::kExponential, Shape::kLognormal,
                      Shape::kSignedWithZeros, Shape::kNarrowPositive}) {
    for (double alpha : {0.05, 0.01, 0.001}) {
      INFO("shape " << static_cast<int>(shape) << " alpha " << alpha);
      TestLcg g(1000 + static_cast<int>(shape));
      Rows rows;
      std::vector<double> values;
      for (int i = 0; i < 20000; ++i) {
        values.push_back(Draw(shape, g));
        rows.AddNumber(values.back());
      }
      auto s = testing::Whole(SketchConfig(alpha), rows);
      const auto& sketch = dynamic_cast<const DDSketchState&>(*s);
      CHECK(sketch.count() == values.size());
      CheckGuarantee(sketch, values, alpha);
      // Finalize emits exactly Quantile(p) per probability, in order.
      auto cells = testing::FinalOf(sketch);
      REQUIRE(cells.size() == kProbabilities.size());
      for (size_t i = 0; i < cells.size(); ++i) CHECK(cells[i].number == sketch.Quantile(kProbabilities[i]));
    }
  }
}

// Intent: the sketch is approximate, not secretly exact: at alpha = 0.05 on
// uniform data some quantile is off by more than 0.1% (so the bound checks
// above measure something).
TEST_CASE("ddsketch: estimates are bucketed") {
  TestLcg g(77);
  Rows rows;
  std::vector<double> values;
  for (int i = 0; i < 5000; ++i) {
    values.push_back(Draw(Shape::kUniform, g));
    rows.AddNumber(values.back());
  }
  auto s = testing::Whole(SketchConfig(0.05), rows);
  std::sort(values.begin(), values.end());
  double worst = 0;
  for (double p : kProbabilities) {
    const double exact = Type7Quantile(values, p);
    worst = std::max(worst, std::fabs(dynamic_cast<const DDSketchState&>(*s).Quantile(p) - exact) / exact);
  }
  CHECK(worst > 1e-3);
}

// Intent: merging the sketches of any split gives bucket counts (and
// min/max) identical to the sketch of the whole input: equal encodings.
TEST_CASE("ddsketch: merge of splits is bucket-identical") {
  TestLcg rng(12);
  for (Shape shape : {Shape::kLognormal, Shape::kSignedWithZeros}) {
    TestLcg g(31);
    Rows rows;
    for (int i = 0; i < 10000; ++i) rows.AddNumber(Draw(shape, g));
    const std::string whole = testing::EncodeOf(*testing::Whole(SketchConfig(0.01), rows));
    for (int shards : {2, 4, 9, 40}) {
      auto merged = testing::SplitMerged(SketchConfig(0.01), rows, shards, rng);
      CHECK(testing::EncodeOf(*merged) == whole);
    }
  }
}

// Intent: when the values of one sign span more than 65536 buckets (tiny
// alpha), the lowest buckets are folded; the fold depends only on the
// highest bucket, so splits still merge identically, and quantiles of
// values above the fold keep the guarantee.
TEST_CASE("ddsketch: folding past the span bound is order-independent") {
  const double alpha = 1e-6;  // 65536 buckets cover magnitudes within a factor ~1.14
  TestLcg g(5);
  Rows rows;
  std::vector<double> values;
  for (int i = 0; i < 20000; ++i) {
    values.push_back(Draw(Shape::kNarrowPositive, g));  // 1..10: a factor 10
    rows.AddNumber(values.back());
  }
  const std::string whole = testing::EncodeOf(*testing::Whole(SketchConfig(alpha), rows));
  TestLcg rng(8);
  for (int shards : {2, 5, 13}) CHECK(testing::EncodeOf(*testing::SplitMerged(SketchConfig(alpha), rows, shards, rng)) == whole);
  // Reversed input order folds at different moments; the result is the same.
  Rows reversed;
  for (size_t i = rows.size(); i-- > 0;) reversed.AddNumber(rows.args(i)[0].number);
  CHECK(testing::EncodeOf(*testing::Whole(SketchConfig(alpha), reversed)) == whole);
  // Above the fold (top 1% of 1..10 lies in 9.9..10, within a factor 1.14
  // of the max) the guarantee holds.
  auto s = testing::Whole(SketchConfig(alpha), rows);
  std::sort(values.begin(), values.end());
  // Below it the fold shows: the 10% quantile (about 1.9) reads as the
  // fold bucket, near 10/1.14.
  const double low = Type7Quantile(values, 0.1);
  CHECK(dynamic_cast<const DDSketchState&>(*s).Quantile(0.1) > 8 * low / 1.9);
  for (double p : {0.99, 0.995, 0.999}) {
    const double exact = Type7Quantile(values, p);
    CHECK(std::fabs(dynamic_cast<const DDSketchState&>(*s).Quantile(p) - exact) <=
          alpha * exact * 1.000001 + 1e-12 * exact);
  }
}

// Intent: empty gives one Null per probability; NaN, infinities and
// non-numbers are skipped and counted; -0.0 and 0.0 are one zero.
TEST_CASE("ddsketch: empty and skipped") {
  Rows rows;
  rows.AddNumber(INFINITY);
  rows.AddNumber(-INFINITY);
  rows.AddString("nan");
  rows.Add(Value::Null());
  auto s = testing::Whole(SketchConfig(0.01), rows);
  auto cells = testing::FinalOf(*s);
  REQUIRE(cells.size() == kProbabilities.size());
  for (const Cell& c : cells) CHECK(c.kind == Cell::Kind::kNull);
  CHECK(s->skipped() == 4);
  Rows zeros;
  zeros.AddNumber(-0.0);
  zeros.AddNumber(0.0);
  Rows zeros2;
  zeros2.AddNumber(0.0);
  zeros2.AddNumber(-0.0);
  CHECK(testing::EncodeOf(*testing::Whole(SketchConfig(0.01), zeros)) ==
        testing::EncodeOf(*testing::Whole(SketchConfig(0.01), zeros2)));
  CHECK(dynamic_cast<const DDSketchState&>(*testing::Whole(SketchConfig(0.01), zeros)).Quantile(0.5) == 0);
}

}  // namespace
}  // namespace fanfold

namespace fanfold {
namespace {

// Intent: a state fed through the bucket-index memo (what a worker's column
// uses past its first inputs) keeps the documented guarantee and equals, byte
// for byte, the state fed by Add: the memo only remembers Index's answers.
// The values repeat (a pool of 12,000 drawn values, so the 8,192-entry memo
// both hits and evicts), both signs, zeros, text, NaN and infinities.
TEST_CASE("ddsketch: the bucket-index memo changes no bucket") {
  for (double alpha : {0.01, 0.001, 1e-6}) {
    INFO("alpha " << alpha);
    TestLcg g(404);
    std::vector<double> pool;
    for (int i = 0; i < 12000; ++i) pool.push_back(Draw(i % 2 ? Shape::kLognormal : Shape::kSignedWithZeros, g));
    Rows rows;
    std::vector<double> values;
    for (int i = 0; i < 60000; ++i) {
      const double x = pool[g.Next() % pool.size()];
      values.push_back(x);
      rows.AddNumber(x);
    }
    rows.AddString("7.25");
    values.push_back(7.25);
    rows.AddString("n/a");
    rows.AddNumber(NAN);
    rows.AddNumber(INFINITY);
    rows.AddNumber(-INFINITY);
    const MeasureConfig config = SketchConfig(alpha);
    DDSketchState plain(config), memoized(config);
    DDSketchState::IndexMemo memo;
    for (size_t i = 0; i < rows.size(); ++i) {
      plain.Add(rows.args(i));
      memoized.AddMemo(rows.args(i), &memo);
    }
    CHECK(memoized.skipped() == 4);
    CHECK(testing::EncodeOf(memoized) == testing::EncodeOf(plain));
    if (alpha >= 0.001) CheckGuarantee(memoized, values, alpha);
  }
}

}  // namespace
}  // namespace fanfold
