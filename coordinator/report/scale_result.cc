#include "coordinator/report/scale_result.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <numeric>

#include <nlohmann/json.hpp>

#include "common/base/json_document.h"
#include "coordinator/run/run_summary.h"

namespace fanfold {
namespace {

using nlohmann::json;

std::string Fixed(double v, int digits) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*f", digits, v);
  return buf;
}

std::string PadLeft(const std::string& s, size_t width) {
  return s.size() >= width ? s : std::string(width - s.size(), ' ') + s;
}

}  // namespace

double Median(std::vector<double> v) {
  if (v.empty()) return 0;
  std::sort(v.begin(), v.end());
  const size_t n = v.size();
  return n % 2 ? v[n / 2] : (v[n / 2 - 1] + v[n / 2]) / 2;
}

double KarpFlattSerialFraction(double s, int p) {
  const double inv_p = 1.0 / p;
  return (1.0 / s - inv_p) / (1.0 - inv_p);
}

double SkewSpeedupBound(const std::vector<double>& t, int p) {
  const double total = std::accumulate(t.begin(), t.end(), 0.0);
  if (t.empty() || !(total > 0)) return p;
  const double longest = *std::max_element(t.begin(), t.end());
  return total / std::max(longest, total / p);
}

void ComputeScaleDerived(ScaleResult* r) {
  if (r->points.empty()) return;
  const double t1 = Median(r->points[0].wall_seconds);
  for (ScalePoint& pt : r->points) {
    pt.median_s = Median(pt.wall_seconds);
    pt.min_s = *std::min_element(pt.wall_seconds.begin(), pt.wall_seconds.end());
    pt.max_s = *std::max_element(pt.wall_seconds.begin(), pt.wall_seconds.end());
    const double m = pt.median_s > 0 ? pt.median_s : 1e-9;
    pt.mb_per_s = static_cast<double>(r->bytes_decompressed) / 1e6 / m;
    pt.records_per_s = static_cast<double>(r->records) / m;
    pt.speedup = t1 / m;
    pt.efficiency = pt.speedup / pt.workers;
    pt.karp_flatt.reset();
    if (pt.workers > 1) pt.karp_flatt = KarpFlattSerialFraction(pt.speedup, pt.workers);
    pt.skew_bound = SkewSpeedupBound(r->shard_seconds, pt.workers);
  }
}

std::string FormatScaleTable(const ScaleResult& r) {
  const std::vector<std::string> head = {"workers", "wall s (median)", "min-max s", "MB/s", "records/s",
                                         "speedup", "efficiency", "serial fraction", "skew bound"};
  std::vector<std::vector<std::string>> rows;
  for (const ScalePoint& p : r.points) {
    rows.push_back({std::to_string(p.workers), Fixed(p.median_s, 3), Fixed(p.min_s, 3) + "-" + Fixed(p.max_s, 3),
                    Fixed(p.mb_per_s, 1), GroupedInteger(static_cast<uint64_t>(p.records_per_s + 0.5)),
                    Fixed(p.speedup, 2) + "x", Fixed(p.efficiency * 100, 1) + "%",
                    p.karp_flatt ? Fixed(*p.karp_flatt, 3) : "-", Fixed(p.skew_bound, 2) + "x"});
  }
  std::vector<size_t> w(head.size());
  for (size_t c = 0; c < head.size(); ++c) {
    w[c] = head[c].size();
    for (const auto& row : rows) w[c] = std::max(w[c], row[c].size());
  }
  std::string out;
  for (size_t c = 0; c < head.size(); ++c) out += (c ? "  " : "") + PadLeft(head[c], w[c]);
  out += "\n";
  for (const auto& row : rows) {
    for (size_t c = 0; c < row.size(); ++c) out += (c ? "  " : "") + PadLeft(row[c], w[c]);
    out += "\n";
  }
  return out;
}

std::string EncodeScaleJson(const ScaleResult& r) {
  json points = json::array();
  for (const ScalePoint& p : r.points) {
    points.push_back({{"workers", p.workers},
                      {"wall_seconds", p.wall_seconds},
                      {"median_s", p.median_s},
                      {"min_s", p.min_s},
                      {"max_s", p.max_s},
                      {"mb_per_s", p.mb_per_s},
                      {"records_per_s", p.records_per_s},
                      {"speedup", p.speedup},
                      {"efficiency", p.efficiency},
                      {"karp_flatt", p.karp_flatt ? json(*p.karp_flatt) : json(nullptr)},
                      {"skew_bound", p.skew_bound}});
  }
  json doc = {{"fanfold_scale", kScaleFormatVersion},
              {"job", r.job},
              {"plan", r.fingerprint},
              {"created", r.created},
              {"cores", r.cores},
              {"repeat", r.repeat},
              {"shards", r.shards},
              {"bytes", {{"compressed", r.bytes_compressed}, {"decompressed", r.bytes_decompressed}}},
              {"records", r.records},
              {"identical_outputs", r.identical_outputs},
              {"output_bytes", r.output_bytes},
              {"shard_seconds", r.shard_seconds},
              {"points", points},
              {"warnings", r.warnings}};
  return doc.dump(1) + "\n";
}

Result<ScaleResult> DecodeScaleJson(const std::string& text, const std::string& where) {
  auto bad = [&](const std::string& what) {
    return Status::InvalidArgument(where + ": not a fanfold scale result (" + what + ")");
  };
  return DecodeJsonObject<ScaleResult>(text, bad, [&](const json& doc) -> Result<ScaleResult> {
    ScaleResult r;
    const int version = doc.at("fanfold_scale").get<int>();
    if (version != kScaleFormatVersion) return bad("version " + std::to_string(version));
    r.job = doc.value("job", "");
    r.fingerprint = doc.value("plan", "");
    r.created = doc.value("created", "");
    r.cores = doc.value("cores", 0u);
    r.repeat = doc.value("repeat", 1);
    r.shards = doc.value("shards", uint64_t{0});
    if (doc.contains("bytes")) {
      r.bytes_compressed = doc["bytes"].value("compressed", uint64_t{0});
      r.bytes_decompressed = doc["bytes"].value("decompressed", uint64_t{0});
    }
    r.records = doc.value("records", uint64_t{0});
    r.identical_outputs = doc.value("identical_outputs", false);
    r.output_bytes = doc.value("output_bytes", uint64_t{0});
    r.shard_seconds = doc.value("shard_seconds", std::vector<double>{});
    r.warnings = doc.value("warnings", std::vector<std::string>{});
    for (const json& p : doc.at("points")) {
      ScalePoint pt;
      pt.workers = p.at("workers").get<int>();
      pt.wall_seconds = p.at("wall_seconds").get<std::vector<double>>();
      if (pt.workers < 1 || pt.wall_seconds.empty()) return bad("a point without workers or wall times");
      r.points.push_back(pt);
    }
    std::sort(r.points.begin(), r.points.end(),
              [](const ScalePoint& a, const ScalePoint& b) { return a.workers < b.workers; });
    if (r.points.empty() || r.points[0].workers != 1) return bad("no 1-worker point");
    ComputeScaleDerived(&r);
    return r;
  });
}

}  // namespace fanfold
