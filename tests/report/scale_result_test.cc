// Tests for the scale measurements: the formulas, the table and the JSON.
#include <doctest/doctest.h>

#include <cmath>

#include "coordinator/report/scale_result.h"

using namespace fanfold;

TEST_CASE("Karp-Flatt serial fraction") {
  // Intent: e = (1/S - 1/p)/(1 - 1/p) (Karp & Flatt 1990, CACM 33(5)): perfect speedup gives 0,
  // no speedup gives 1, and S = 1.6 on 2 processors gives (0.625 - 0.5)/0.5 = 0.25.
  CHECK(KarpFlattSerialFraction(2.0, 2) == doctest::Approx(0.0));
  CHECK(KarpFlattSerialFraction(1.0, 8) == doctest::Approx(1.0));
  CHECK(KarpFlattSerialFraction(1.6, 2) == doctest::Approx(0.25));
  // Amdahl (1967) with serial fraction f: S = 1/(f + (1-f)/p); Karp-Flatt recovers f exactly.
  const double f = 0.1, p = 4, s = 1 / (f + (1 - f) / p);
  CHECK(KarpFlattSerialFraction(s, 4) == doctest::Approx(f));
}

TEST_CASE("shard-skew speedup bound") {
  // Intent: S(p) <= T / max(max t, T/p) (makespan lower bound, Graham 1969): one shard
  // holding half the work caps speedup at 2 whatever p; equal shards allow p.
  CHECK(SkewSpeedupBound({4, 1, 1, 1, 1}, 2) == doctest::Approx(2.0));
  CHECK(SkewSpeedupBound({4, 1, 1, 1, 1}, 8) == doctest::Approx(2.0));
  CHECK(SkewSpeedupBound({1, 1, 1, 1}, 4) == doctest::Approx(4.0));
  CHECK(SkewSpeedupBound({1, 1, 1, 1}, 3) == doctest::Approx(3.0));
  CHECK(SkewSpeedupBound({}, 3) == 3.0);
}

TEST_CASE("median") {
  // Intent: middle value; mean of the two middle ones for an even count.
  CHECK(Median({3, 1, 2}) == 2);
  CHECK(Median({4, 1, 3, 2}) == 2.5);
  CHECK(Median({}) == 0);
}

TEST_CASE("derived fields, table and JSON round trip") {
  // Intent: speedup/efficiency/serial fraction follow from the medians; JSON decodes to the same numbers.
  ScaleResult r;
  r.job = "/j.json";
  r.cores = 2;
  r.repeat = 3;
  r.shards = 4;
  r.records = 1'000'000;
  r.bytes_decompressed = 200'000'000;
  r.shard_seconds = {0.5, 0.5, 0.5, 0.5};
  r.points.resize(2);
  r.points[0].workers = 1;
  r.points[0].wall_seconds = {2.1, 2.0, 2.2};
  r.points[1].workers = 2;
  r.points[1].wall_seconds = {1.3, 1.25, 1.2};
  ComputeScaleDerived(&r);
  const ScalePoint& p2 = r.points[1];
  CHECK(p2.median_s == doctest::Approx(1.25));
  CHECK(p2.min_s == doctest::Approx(1.2));
  CHECK(p2.speedup == doctest::Approx(2.1 / 1.25));
  CHECK(p2.efficiency == doctest::Approx(2.1 / 1.25 / 2));
  REQUIRE(p2.karp_flatt.has_value());
  CHECK(*p2.karp_flatt == doctest::Approx((1.25 / 2.1 - 0.5) / 0.5));
  CHECK_FALSE(r.points[0].karp_flatt.has_value());
  CHECK(p2.mb_per_s == doctest::Approx(160.0));
  CHECK(p2.skew_bound == doctest::Approx(2.0));
  const std::string table = FormatScaleTable(r);
  CHECK(table.find("workers") != std::string::npos);
  CHECK(table.find("1.68x") != std::string::npos);
  CHECK(table.find("2.100") != std::string::npos);
  Result<ScaleResult> back = DecodeScaleJson(EncodeScaleJson(r), "scale.json");
  REQUIRE(back.ok());
  REQUIRE(back->points.size() == 2);
  CHECK(back->points[1].speedup == doctest::Approx(p2.speedup));
  CHECK(back->shard_seconds.size() == 4);
  CHECK_FALSE(DecodeScaleJson("{\"fanfold_scale\":1,\"points\":[]}", "x").ok());
  CHECK_FALSE(DecodeScaleJson("[", "x").ok());
}
