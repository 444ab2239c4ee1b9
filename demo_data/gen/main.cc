// fanfold-gen: writes invented street-lamp event shards (one per hour) plus a
// manifest.json that records, per file, how many well-formed records and how
// many deliberately malformed lines it holds. Same flags => same bytes.
// Exit status: 0 done, 2 bad usage, 3 I/O error.
#include <atomic>
#include <charconv>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <string>
#include <thread>
#include <vector>

#include <CLI/CLI.hpp>
#include <nlohmann/json.hpp>

#include "demo_data/gen/gen_compress.h"
#include "demo_data/gen/lamp_world.h"
#include "demo_data/gen/shard_text.h"

namespace fs = std::filesystem;
using fanfold::gen::GenCompression;
using fanfold::gen::TextFormat;

namespace {

struct GenOptions {
  std::string out_dir;              // where shards and manifest.json go
  uint32_t shards = 48;             // one per hour from `start`
  uint64_t records = 2000;          // mean lines per shard (malformed ones included)
  uint64_t seed = 1;
  std::string format = "ndjson";    // ndjson | csv | tsv
  std::string compress = "zst";     // zst | gz | none
  double bad_rate = 0.002;          // chance that a line is written broken
  std::string start = "2026-03-01T00";
  uint32_t lamps = 1200;            // lamp controllers in the city
  double spread = 0.25;             // shard sizes vary by +-spread of the mean
  std::string prefix = "lamps";     // file names: PREFIX-YYYY-MM-DDTHH.EXT
  bool tiny = false;                // 10000 shards of ~20 lines unless overridden
  unsigned threads = 1;             // shards generated in parallel
  uint64_t tags = 0;                // > 0: each event carries a tag from this many
  bool lean = false;                // short records (lamp, tag, power) only
};

struct FileResult {
  std::string name;
  uint64_t records = 0, malformed = 0, raw_bytes = 0, bytes = 0;
  std::string error;
};

std::string DoubleText(double v) {
  char buf[32];
  auto r = std::to_chars(buf, buf + sizeof buf, v);
  return std::string(buf, r.ptr);
}

// The flags that reproduce this output, --out and --threads left out.
std::string CanonicalCommand(const GenOptions& o) {
  return "fanfold-gen --shards " + std::to_string(o.shards) + " --records " +
         std::to_string(o.records) + " --seed " + std::to_string(o.seed) + " --format " + o.format +
         " --compress " + o.compress + " --bad-rate " + DoubleText(o.bad_rate) + " --start " +
         o.start + " --lamps " + std::to_string(o.lamps) + " --spread " + DoubleText(o.spread) +
         " --prefix " + o.prefix + (o.tags > 0 ? " --tags " + std::to_string(o.tags) : "") +
         (o.lean ? " --lean" : "");
}

bool WriteFileAtomically(const fs::path& path, const std::string& bytes, std::string* error) {
  const fs::path tmp = path.string() + ".tmp";
  {
    std::ofstream f(tmp, std::ios::binary | std::ios::trunc);
    f.write(bytes.data(), static_cast<std::streamsize>(bytes.size()));
    f.close();
    if (!f) {
      *error = "cannot write " + tmp.string();
      return false;
    }
  }
  std::error_code ec;
  fs::rename(tmp, path, ec);
  if (ec) {
    *error = "cannot rename " + tmp.string() + ": " + ec.message();
    return false;
  }
  return true;
}

void GenerateOne(const GenOptions& o, const fanfold::gen::LampWorld& world, TextFormat format,
                 GenCompression comp, const std::string& ext, uint32_t index, FileResult* r) {
  std::vector<fanfold::gen::LampEvent> events;
  world.Generate(index, world.LinesFor(index, o.records, o.spread), &events);
  std::string text, packed;
  const fanfold::gen::ShardCounts counts = fanfold::gen::FormatShard(world, events, format, o.lean, &text);
  std::string hour;
  fanfold::gen::AppendIsoTime(world.HourStart(index), 0, true, &hour);
  r->name = o.prefix + "-" + hour.substr(0, 13) + ext;
  r->records = counts.records;
  r->malformed = counts.malformed;
  r->raw_bytes = text.size();
  if (!fanfold::gen::Compress(comp, text, &packed, &r->error)) return;
  r->bytes = packed.size();
  WriteFileAtomically(fs::path(o.out_dir) / r->name, packed, &r->error);
}

int Run(GenOptions o, bool shards_given, bool records_given) {
  if (o.tiny) {
    if (!shards_given) o.shards = 10000;
    if (!records_given) o.records = 20;
  }
  int64_t start_ms = 0;
  if (!fanfold::gen::ParseHour(o.start, &start_ms)) {
    std::fprintf(stderr, "fanfold-gen: --start: expected YYYY-MM-DDTHH, got '%s'\n", o.start.c_str());
    return 2;
  }
  if (o.prefix.empty() || o.prefix.find('/') != std::string::npos) {
    std::fprintf(stderr, "fanfold-gen: --prefix: expected a file name part without '/', got '%s'\n",
                 o.prefix.c_str());
    return 2;
  }
  const TextFormat format = o.format == "csv" ? TextFormat::kCsv
                            : o.format == "tsv" ? TextFormat::kTsv
                                                : TextFormat::kNdjson;
  const GenCompression comp = o.compress == "zst"  ? GenCompression::kZstd
                              : o.compress == "gz" ? GenCompression::kGzip
                                                   : GenCompression::kNone;
  const std::string ext = "." + o.format + std::string(fanfold::gen::CompressionSuffix(comp));

  std::error_code ec;
  fs::create_directories(o.out_dir, ec);
  if (ec) {
    std::fprintf(stderr, "fanfold-gen: cannot create %s: %s\n", o.out_dir.c_str(), ec.message().c_str());
    return 3;
  }

  if ((o.tags > 0 || o.lean) && format != TextFormat::kNdjson) {
    std::fprintf(stderr, "fanfold-gen: --tags and --lean write NDJSON only; got --format %s\n", o.format.c_str());
    return 2;
  }
  fanfold::gen::LampWorld world(o.seed, o.lamps, start_ms, o.bad_rate);
  world.set_tags(o.tags);
  std::vector<FileResult> results(o.shards);
  std::atomic<uint32_t> next{0};
  auto work = [&] {
    for (uint32_t i; (i = next.fetch_add(1)) < o.shards;) {
      GenerateOne(o, world, format, comp, ext, i, &results[i]);
    }
  };
  std::vector<std::thread> pool;
  for (unsigned t = 1; t < o.threads; ++t) pool.emplace_back(work);
  work();
  for (std::thread& t : pool) t.join();

  nlohmann::ordered_json files = nlohmann::ordered_json::array();
  uint64_t records = 0, malformed = 0, raw = 0, bytes = 0;
  for (const FileResult& r : results) {
    if (!r.error.empty()) {
      std::fprintf(stderr, "fanfold-gen: %s: %s\n", r.name.c_str(), r.error.c_str());
      return 3;
    }
    files.push_back({{"name", r.name}, {"records", r.records}, {"malformed", r.malformed},
                     {"raw_bytes", r.raw_bytes}, {"bytes", r.bytes}});
    records += r.records;
    malformed += r.malformed;
    raw += r.raw_bytes;
    bytes += r.bytes;
  }
  nlohmann::ordered_json manifest = {
      {"generator", "fanfold-gen"},
      {"manifest_version", 1},
      {"command", CanonicalCommand(o)},
      {"settings",
       {{"shards", o.shards}, {"records", o.records}, {"seed", o.seed}, {"format", o.format},
        {"compress", o.compress}, {"bad_rate", o.bad_rate}, {"start", o.start}, {"lamps", o.lamps},
        {"spread", o.spread}, {"prefix", o.prefix}}},
      {"csv_columns", std::string(fanfold::gen::CsvColumns())},
      {"totals",
       {{"files", o.shards}, {"records", records}, {"malformed", malformed}, {"raw_bytes", raw},
        {"bytes", bytes}}},
      {"files", files},
  };
  if (o.tags > 0) manifest["settings"]["tags"] = o.tags;
  if (o.lean) manifest["settings"]["lean"] = true;
  std::string error;
  if (!WriteFileAtomically(fs::path(o.out_dir) / "manifest.json", manifest.dump(1) + "\n", &error)) {
    std::fprintf(stderr, "fanfold-gen: %s\n", error.c_str());
    return 3;
  }
  std::fprintf(stderr,
               "fanfold-gen: %u files in %s: %llu records, %llu malformed lines, %llu bytes "
               "(%llu uncompressed)\n",
               o.shards, o.out_dir.c_str(), static_cast<unsigned long long>(records),
               static_cast<unsigned long long>(malformed), static_cast<unsigned long long>(bytes),
               static_cast<unsigned long long>(raw));
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  GenOptions o;
  CLI::App app{"fanfold-gen: invented street-lamp event shards for fanfold demos, tests and benchmarks"};
  app.add_option("--out", o.out_dir, "Output directory (created if needed)")->required();
  CLI::Option* shards = app.add_option("--shards", o.shards, "Hourly shards to write")
                            ->check(CLI::Range(1u, 1000000u));
  CLI::Option* records = app.add_option("--records", o.records, "Mean lines per shard")
                             ->check(CLI::Range(uint64_t{1}, uint64_t{3600000}));
  app.add_option("--seed", o.seed, "Seed; same flags and seed give the same bytes");
  app.add_option("--format", o.format, "ndjson, csv or tsv")
      ->check(CLI::IsMember({"ndjson", "csv", "tsv"}));
  app.add_option("--compress", o.compress, "zst, gz or none")
      ->check(CLI::IsMember({"zst", "gz", "none"}));
  app.add_option("--bad-rate", o.bad_rate, "Fraction of lines written malformed")
      ->check(CLI::Range(0.0, 1.0));
  app.add_option("--start", o.start, "First hour, YYYY-MM-DDTHH (UTC)");
  app.add_option("--lamps", o.lamps, "Lamp controllers in the city")->check(CLI::Range(1u, 100000u));
  app.add_option("--spread", o.spread, "Shard sizes vary by +-this fraction of the mean")
      ->check(CLI::Range(0.0, 0.9));
  app.add_option("--prefix", o.prefix, "File name prefix");
  app.add_flag("--tiny", o.tiny, "10000 shards of ~20 lines (unless --shards/--records say otherwise)");
  app.add_option("--tags", o.tags,
                 "Each event carries a \"tag\" (a road-user transponder the lamp saw) drawn from this many values")
      ->check(CLI::Range(uint64_t{1}, uint64_t{10000000000}));
  app.add_flag("--lean", o.lean, "Short NDJSON records: lamp, tag and power only (benchmarks of many records)");
  app.add_option("--threads", o.threads, "Generate shards on this many threads")
      ->check(CLI::Range(1u, 256u));
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    return app.exit(e) == 0 ? 0 : 2;
  }
  return Run(o, shards->count() > 0, records->count() > 0);
}
