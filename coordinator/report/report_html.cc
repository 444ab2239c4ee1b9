#include "coordinator/report/report_html.h"

#include <algorithm>
#include <cstdio>
#include <filesystem>
#include <map>

#include "coordinator/report/report_charts.h"
#include "coordinator/report/report_page.h"
#include "coordinator/report/svg_chart.h"
#include "coordinator/run/run_summary.h"

namespace fanfold {
namespace {

std::string Esc(const std::string& s) { return XmlEscape(s); }
std::string FileName(const std::string& p) { return std::filesystem::path(p).filename().string(); }

std::string Fmt(const char* f, double v) {
  char buf[64];
  std::snprintf(buf, sizeof buf, f, v);
  return buf;
}

// A number in the summary: visible text plus the summary.json key and raw value.
std::string Num(const std::string& key, const std::string& raw, const std::string& shown) {
  return "<span class=\"num\" data-summary=\"" + key + "\" data-value=\"" + raw + "\">" + Esc(shown) + "</span>";
}
std::string Int(const std::string& key, uint64_t v) { return Num(key, std::to_string(v), GroupedInteger(v)); }

std::string Card(const std::string& label, const std::string& value, const std::string& sub, bool alert = false) {
  return std::string("<div class=\"card") + (alert ? " alert" : "") + "\"><div class=\"label\">" + Esc(label) +
         "</div><div>" + value + "</div>" + (sub.empty() ? "" : "<div class=\"sub\">" + sub + "</div>") + "</div>";
}

std::string SummarySection(const RunRecord& r, const RunAnalysis& a) {
  const RunTotals& t = a.totals;
  // Rates over the shards this session processed, not those it reused.
  const double secs = t.processed_seconds;
  const double mbps = secs > 0 ? static_cast<double>(t.processed_bytes_decompressed) / 1e6 / secs : 0;
  const double rps = secs > 0 ? static_cast<double>(t.processed_records) / secs : 0;
  std::string h = "<section id=\"summary\" data-source=\"" + std::string(t.from_summary ? "summary.json" : "journal") +
                  "\"><h2>Summary</h2><p class=\"lead\">" +
                  (t.from_summary ? std::string("From the run's summary.json.")
                                  : std::string("The run has no summary.json yet; these totals are added up from "
                                                "its journal.")) +
                  "</p><div class=\"cards\">";
  h += Card("Shards done", Int("shards.done", t.shards_done), "of " + Int("shards.total", t.shards_total) + " shards");
  h += Card("Failed shards", Int("shards.failed", t.shards_failed),
            t.shards_failed ? "see “Failed shards” below" : "none", t.shards_failed > 0);
  h += Card("Retries", Int("shards.retries", t.retries), "re-run after a crash, time-out or corrupt partial");
  h += Card("Reused", Int("shards.reused", t.shards_reused), "partials kept from an earlier session");
  h += Card("Records read", Int("records.read", t.records_read), "kept " + Int("records.kept", t.records_kept));
  h += Card("Malformed records", Int("records.malformed", t.records_malformed), "skipped and counted",
            t.records_malformed > 0);
  h += Card("Input read", Num("bytes.compressed", std::to_string(t.bytes_compressed), Megabytes(t.bytes_compressed)),
            Num("bytes.decompressed", std::to_string(t.bytes_decompressed), Megabytes(t.bytes_decompressed)) +
                " decompressed");
  h += Card("Wall time", Num("wall_seconds", Fmt("%.17g", t.wall_seconds), Fmt("%.2f s", t.wall_seconds)),
            Fmt("%.1f MB/s", mbps) + " · " + GroupedInteger(static_cast<uint64_t>(rps + 0.5)) + " records/s" +
                (t.shards_reused > 0 ? " over the " + GroupedInteger(t.processed_shards) + " shards processed" : "") +
                (r.sessions.size() > 1 && t.from_summary ? " (the last session)" : ""));
  h += Card("Workers", Num("workers", std::to_string(t.workers), std::to_string(t.workers)),
            std::to_string(r.sessions.size()) + (r.sessions.size() == 1 ? " session" : " sessions"));
  if (r.summary.peak_rss > 0)
    h += Card("Peak memory",
              Num("peak_rss_bytes.coordinator", std::to_string(r.summary.peak_rss), Megabytes(r.summary.peak_rss)),
              "coordinator" +
                  (r.summary.peak_worker_rss > 0 ? "; largest worker " + Num("peak_rss_bytes.largest_worker",
                                                                             std::to_string(r.summary.peak_worker_rss),
                                                                             Megabytes(r.summary.peak_worker_rss))
                                                 : std::string()) +
                  " (the kernel's count, last session)");
  h += "</div>";
  const auto skipped_text = [](const std::map<std::string, uint64_t>& skipped) {
    std::string sk;
    for (const auto& [m, n] : skipped)
      if (n) sk += (sk.empty() ? "" : ", ") + Esc(m) + " " + GroupedInteger(n);
    return sk;
  };
  if (const std::string sk = skipped_text(r.summary.skipped); !sk.empty())
    h += "<p class=\"note\">Values skipped by numeric measures (missing, null or not numbers): " + sk + ".</p>";
  if (!r.summary.reductions.empty()) {
    // One read fed several reductions: what each kept and where its result is.
    h += "<table id=\"reductions\"><tr><th>reduction</th><th>records kept</th><th>result</th><th>output</th>"
         "<th>values skipped</th></tr>";
    for (const SummaryRecord::Reduction& red : r.summary.reductions)
      h += "<tr><td>" + Esc(red.name) + "</td><td class=\"n\">" + GroupedInteger(red.kept) + "</td><td>" +
           Esc(red.result) + "</td><td>" + Esc(red.output) + "</td><td>" + skipped_text(red.skipped) + "</td></tr>";
    h += "</table>";
  }
  return h + "</section>";
}

std::string Legend() {
  return "<ul class=\"legend\"><li><span class=\"sw done\"></span>done (shard number inside when it fits)</li>"
         "<li><span class=\"sw retried\"></span>\u21BB worker died, timed out or sent a corrupt partial; retried</li>"
         "<li><span class=\"sw failed\"></span>\u2715 failed: bad data, or quarantined after its last attempt</li>"
         "<li>hover a bar for shard, times and records</li></ul>";
}

std::string SessionSection(const RunRecord& r, const SessionView& v, size_t ordinal) {
  const RunSession& s = r.sessions[v.session];
  size_t failed = 0, retried = 0;
  for (size_t i : v.attempts) {
    const AttemptEntry& e = r.attempts[i];
    if (!e.final)
      ++retried;
    else if (!e.done())
      ++failed;
  }
  std::string name = s.mode == "resume" ? "resume" : "run";
  if (r.sessions.size() > 1)
    name += " (session " + std::to_string(ordinal + 1) + " of " + std::to_string(r.sessions.size()) + ")";
  std::string h =
      "<section class=\"session\" data-session=\"" + std::to_string(v.session) + "\"><h2>Timeline — " + Esc(name) +
      "</h2><p class=\"lead\">" + std::to_string(v.attempts.size()) + " attempts on " + std::to_string(v.lanes) +
      (v.lanes == 1 ? " worker" : " workers") + " over " + DurationText(v.span_s) + "; " + std::to_string(retried) +
      " retried, " + std::to_string(failed) + " failed. Largest shards are dispatched first." +
      (s.interrupted
           ? " Interrupted after " + DurationText(v.span_s) + "; shards in flight then left no attempt in the journal."
           : std::string()) +
      "</p>";
  h += TimelineSvg(r, v) + Legend();
  h += "<h2 style=\"margin-top:18px\">Throughput over time</h2><p class=\"lead\">Decompressed input per second, "
       "each shard's bytes spread evenly over its attempt; hover for records/s.</p>";
  h += ThroughputSvg(v);
  return h + "</section>";
}

std::string ShardTimesSection(const RunRecord& r, const RunAnalysis& a) {
  if (a.shard_times.empty()) return "";
  std::string h =
      "<section id=\"shard-times\"><h2>Shard times</h2><p class=\"lead\">Median " + DurationText(a.median_s) +
      ", quartiles " + DurationText(a.q1_s) + " – " + DurationText(a.q3_s) +
      ". A straggler takes longer than Tukey's upper fence (Q3 + 1.5 × IQR), at least " +
      Fmt("%.1f", kStragglerMinRatio) + " × the median and at least " + DurationText(kStragglerMinExcessS) +
      " more than the median: " + std::to_string(a.straggler_count) +
      (a.straggler_count == 1 ? " shard." : " shards.") + "</p><div class=\"two\"><div>" + ShardTimeHistogramSvg(a) +
      "<ul class=\"legend\"><li><span class=\"sw sky\"></span>shards</li><li><span class=\"sw verm\">"
      "</span>bin holding a straggler</li></ul></div><div><table><thead><tr><th>slowest shards</th>"
      "<th class=\"n\">time</th><th class=\"n\">× median</th><th class=\"n\">records</th></tr></thead><tbody>";
  for (const ShardTime& t : a.slowest) {
    h += std::string("<tr") + (t.straggler ? " class=\"flag\"" : "") + "><td title=\"" + Esc(r.ShardPath(t.shard)) +
         "\">" + std::to_string(t.shard) + " · " + Esc(FileName(r.ShardPath(t.shard))) +
         (t.straggler ? " <strong>(straggler)</strong>" : "") + "</td><td class=\"n\">" + DurationText(t.seconds) +
         "</td><td class=\"n\">" + Fmt("%.2f", a.median_s > 0 ? t.seconds / a.median_s : 0) + "</td><td class=\"n\">" +
         GroupedInteger(t.records) + "</td></tr>";
  }
  return h + "</tbody></table></div></div></section>";
}

std::string PhaseSection(const RunAnalysis& a) {
  const uint64_t total = a.read_ns + a.parse_ns + a.aggregate_ns + a.encode_ns;
  if (total == 0) return "";
  struct Ph {
    const char* cls;
    const char* name;
    uint64_t ns;
  };
  const Ph ph[] = {{"ph-read", "reading + decompressing", a.read_ns},
                   {"ph-parse", "parsing", a.parse_ns},
                   {"ph-aggregate", "filtering + aggregating", a.aggregate_ns},
                   {"ph-encode", "encoding the partial", a.encode_ns}};
  std::string bar = "<div class=\"phases\" role=\"img\" aria-label=\"Share of worker time per phase\">";
  std::string legend = "<ul class=\"legend\">";
  for (const Ph& p : ph) {
    const double pct = 100.0 * static_cast<double>(p.ns) / static_cast<double>(total);
    bar += std::string("<div class=\"") + p.cls + "\" style=\"width:" + Fmt("%.3f", pct) + "%\" title=\"" + p.name +
           ": " + DurationText(p.ns / 1e9) + "\">" + (pct >= 7 ? Fmt("%.0f%%", pct) : "") + "</div>";
    legend += std::string("<li><span class=\"sw ") + p.cls + "\"></span>" + p.name + ": " + DurationText(p.ns / 1e9) +
              " (" + Fmt("%.1f%%", pct) + ")</li>";
  }
  return "<section id=\"phases\"><h2>Where the workers' time went</h2><p class=\"lead\">Summed over every finished "
         "attempt, as each worker clocked it (per block read and per batch of records): " +
         DurationText(total / 1e9) + " in all (" + Esc(PhasesProvenance(a)) + ").</p>" + bar + "</div>" + legend +
         "</ul></section>";
}

std::string BadRecordsSection(const RunRecord& r, const RunAnalysis& a) {
  if (a.malformed_by_shard.empty() && r.summary.samples.empty()) return "";
  std::vector<std::pair<uint32_t, uint64_t>> worst = a.malformed_by_shard;
  std::stable_sort(worst.begin(), worst.end(), [](const auto& x, const auto& y) { return x.second > y.second; });
  if (worst.size() > 8) worst.resize(8);
  uint64_t most = worst.empty() ? 1 : worst[0].second;
  std::string h =
      "<section id=\"bad-records\"><h2>Bad records</h2><p class=\"lead\">Malformed records per shard "
      "(skipped and counted): " +
      std::to_string(a.malformed_by_shard.size()) + " of " + std::to_string(r.manifest.shards.shards.size()) +
      " shards have some, " + GroupedInteger(a.totals.records_malformed) + " in all. Hover a column for its file.</p>" +
      MalformedSvg(r, a) +
      "<div class=\"two\"><div><table class=\"sortable\"><thead><tr>"
      "<th class=\"n\">shard</th><th>file (most malformed first)</th><th>malformed</th></tr></thead><tbody>";
  for (const auto& [s, n] : worst) {
    h += "<tr><td class=\"n\">" + std::to_string(s) + "</td><td title=\"" + Esc(r.ShardPath(s)) + "\">" +
         Esc(FileName(r.ShardPath(s))) + "</td><td data-v=\"" + std::to_string(n) +
         "\"><span class=\"hbar\" style=\"width:" +
         Fmt("%.0f", 4 + 120.0 * static_cast<double>(n) / static_cast<double>(most)) + "px\"></span>" +
         GroupedInteger(n) + "</td></tr>";
  }
  h += "</tbody></table></div><div><table><thead><tr><th>sample</th><th class=\"n\">line</th><th>reason</th></tr>"
       "</thead><tbody>";
  for (const auto& m : r.summary.samples)
    h += "<tr><td title=\"" + Esc(m.path) + "\">" + std::to_string(m.shard) + " · " + Esc(FileName(m.path)) +
         "</td><td class=\"n\">" + std::to_string(m.line) + "</td><td>" + Esc(m.reason) + "</td></tr>";
  if (r.summary.samples.empty()) h += "<tr><td colspan=\"3\" class=\"note\">no samples recorded</td></tr>";
  return h + "</tbody></table></div></div></section>";
}

// A refreshed run's generations: when, what each reused, computed and
// dropped (the files by name, every one in the cell's title), how long.
std::string GenerationsSection(const RunRecord& r) {
  if (r.generations.size() < 2) return "";
  std::string h =
      "<section id=\"generations\"><h2>Generations</h2><p class=\"lead\">Each <code>fanfold refresh</code> "
      "starts a generation; the timelines and shard times below are the last one's.</p><table><thead><tr>"
      "<th>generation</th><th>summary</th></tr></thead><tbody>";
  const std::vector<std::string> lines = GenerationLines(r);
  for (size_t i = 0; i < r.generations.size() && i < lines.size(); ++i) {
    std::string all;
    for (const std::string& p : r.generations[i].computed_paths) all += "computed " + p + "\n";
    for (const std::string& p : r.generations[i].dropped_paths) all += "dropped " + p + "\n";
    h += "<tr><td class=\"n\">" + std::to_string(r.generations[i].generation) + "</td><td title=\"" + Esc(all) + "\">" +
         Esc(lines[i]) + "</td></tr>";
  }
  return h + "</tbody></table></section>";
}

std::string FailuresSection(const RunRecord& r, const RunAnalysis& a) {
  std::string h = "<section id=\"failures\"><h2>Failed shards</h2>";
  if (a.failures.empty()) return h + "<p class=\"lead\">None: every shard that was attempted finished.</p></section>";
  h += "<p class=\"lead\">Their records are missing from the result; <code>fanfold resume</code> tries them again."
       "</p><table><thead><tr><th class=\"n\">shard</th><th>file</th><th class=\"n\">attempts</th><th>reason</th>"
       "</tr></thead><tbody>";
  for (const FailureView& f : a.failures)
    h += "<tr class=\"flag\"><td class=\"n\">" + std::to_string(f.shard) + "</td><td title=\"" + Esc(f.path) + "\">" +
         Esc(FileName(f.path)) + "</td><td class=\"n\">" + std::to_string(f.attempts) + "</td><td>\u2715 " +
         Esc(f.reason) + "</td></tr>";
  return h + "</tbody></table></section>";
}

std::string AllShardsSection(const RunRecord& r) {
  std::map<uint32_t, std::pair<const AttemptEntry*, uint32_t>> last;  // shard -> (last attempt, attempts)
  for (const AttemptEntry& e : r.attempts) {
    auto& slot = last[e.shard];
    slot.first = &e;
    ++slot.second;
  }
  auto ms = [](uint64_t ns) { return Fmt("%.1f", ns / 1e6); };
  std::string h =
      "<section id=\"shards\"><details><summary>All " + std::to_string(r.manifest.shards.shards.size()) +
      " shards: last attempt, phases and counts (click a heading to sort)</summary><table class=\"sortable\">"
      "<thead><tr><th class=\"n\">shard</th><th>file</th><th>outcome</th><th class=\"n\">worker</th>"
      "<th class=\"n\">attempts</th><th class=\"n\">ms</th><th class=\"n\">read ms</th>"
      "<th class=\"n\">parse ms</th><th class=\"n\">aggregate ms</th><th class=\"n\">encode ms</th>"
      "<th class=\"n\">MB in</th><th class=\"n\">MB raw</th><th class=\"n\">records</th>"
      "<th class=\"n\">kept</th><th class=\"n\">malformed</th></tr></thead><tbody>";
  for (const Shard& s : r.manifest.shards.shards) {
    auto it = last.find(s.index);
    h += "<tr><td class=\"n\">" + std::to_string(s.index) + "</td><td title=\"" + Esc(s.path) + "\">" +
         Esc(FileName(s.path)) + "</td>";
    if (it == last.end()) {
      h += "<td colspan=\"13\" class=\"note\">no attempt in this journal</td></tr>";
      continue;
    }
    const AttemptEntry& e = *it->second.first;
    h += "<td>" + Esc(e.done() ? "done" : e.outcome) + "</td><td class=\"n\">" + std::to_string(e.worker) +
         (e.node.empty() ? "" : "<br><span class=\"node\">" + Esc(e.node) + "</span>") + "</td><td class=\"n\">" + std::to_string(it->second.second) + "</td><td class=\"n\">" +
         Fmt("%.1f", e.seconds() * 1e3) + "</td><td class=\"n\">" + ms(e.read_ns) + "</td><td class=\"n\">" +
         ms(e.parse_ns) + "</td><td class=\"n\">" + ms(e.aggregate_ns) + "</td><td class=\"n\">" + ms(e.encode_ns) +
         "</td><td class=\"n\">" + Fmt("%.2f", e.bytes_in / 1e6) + "</td><td class=\"n\">" +
         Fmt("%.2f", e.bytes_raw / 1e6) + "</td><td class=\"n\">" + std::to_string(e.records) +
         "</td><td class=\"n\">" + std::to_string(e.kept) + "</td><td class=\"n\">" + std::to_string(e.malformed) +
         "</td></tr>";
  }
  return h + "</tbody></table></details></section>";
}

std::string ScaleSection(const ScaleResult& s) {
  std::string h =
      "<section id=\"scaling\"><h2>Scaling</h2><p class=\"lead\">The same job from scratch at each "
      "worker count, " +
      std::to_string(s.repeat) + (s.repeat == 1 ? " timed run" : " timed runs") +
      " each after an untimed warm-up run; " + std::to_string(s.shards) + " shards, " +
      Megabytes(s.bytes_decompressed) + " decompressed, on a machine with " + std::to_string(s.cores) +
      (s.cores == 1 ? " core" : " cores") + ". Results " +
      (s.identical_outputs ? "byte-identical in every run." : "<strong>differ between runs</strong>.") +
      "</p><div class=\"narrow\">" + ScalingSvg(s) +
      "<ul class=\"legend\"><li><span class=\"sw line\"></span>measured speedup (median)</li>"
      "<li><span class=\"sw line ideal\"></span>ideal, S = p</li><li><span class=\"sw line bound\"></span>"
      "bound from shard sizes: total / max(longest shard, total / p)</li></ul></div>"
      "<table><thead><tr><th class=\"n\">workers</th><th class=\"n\">median s</th><th class=\"n\">"
      "min–max s</th><th class=\"n\">MB/s</th><th class=\"n\">records/s</th><th class=\"n\">speedup</th><th "
      "class=\"n\">efficiency</th>"
      "<th class=\"n\">serial fraction</th><th class=\"n\">bound</th></tr></thead><tbody>";
  for (const ScalePoint& p : s.points)
    h += "<tr data-workers=\"" + std::to_string(p.workers) + "\"><td class=\"n\">" + std::to_string(p.workers) +
         "</td><td class=\"n\">" + Fmt("%.3f", p.median_s) + "</td><td class=\"n\">" + Fmt("%.3f", p.min_s) + "–" +
         Fmt("%.3f", p.max_s) + "</td><td class=\"n\">" + Fmt("%.1f", p.mb_per_s) + "</td><td class=\"n\">" +
         GroupedInteger(static_cast<uint64_t>(p.records_per_s + 0.5)) + "</td><td class=\"n\">" +
         Fmt("%.2f×", p.speedup) + "</td><td class=\"n\">" + Fmt("%.0f%%", p.efficiency * 100) +
         "</td><td class=\"n\">" + (p.karp_flatt ? Fmt("%.3f", *p.karp_flatt) : "–") + "</td><td class=\"n\">" +
         Fmt("%.2f×", p.skew_bound) + "</td></tr>";
  h += "</tbody></table><p class=\"note\">Serial fraction: Karp and Flatt's e = (1/S − 1/p) / (1 − 1/p); a value "
       "that grows with p points to overhead that grows with workers rather than a fixed serial part.</p>";
  if (!s.warnings.empty()) {
    h += "<ul class=\"warn-list\">";
    for (const auto& w : s.warnings) h += "<li>" + Esc(w) + "</li>";
    h += "</ul>";
  }
  return h + "</section>";
}

std::string StatusPill(const RunAnalysis& a) {
  if (a.status == "finished") return "<span class=\"pill ok\">\u2713 finished</span>";
  if (a.status == "finished with failed shards")
    return "<span class=\"pill bad\">\u2715 finished with " + std::to_string(a.totals.shards_failed) +
           (a.totals.shards_failed == 1 ? " failed shard" : " failed shards") + "</span>";
  if (a.status == "interrupted") return "<span class=\"pill warn\">! interrupted — resume it to finish</span>";
  return "<span class=\"pill warn\">\u2026 unfinished (no summary.json)</span>";
}

}  // namespace

std::string RenderReportHtml(const RunRecord& r, const RunAnalysis& a, const ScaleResult* scale) {
  const std::string job = std::filesystem::path(r.manifest.job_path).stem().string();
  std::string h = PageStart("fanfold report: " + job);
  h += "<header><h1>Run report: " + Esc(job) + "</h1>" + StatusPill(a) + "<p class=\"meta\">job <code>" +
       Esc(r.manifest.job_path) + "</code></p><p class=\"meta\">run directory <code>" + Esc(r.dir) +
       "</code> · plan <code>" + Esc(r.manifest.fingerprint) + "</code> · started " + Esc(r.manifest.created_utc) +
       " · format " + Esc(r.manifest.format) + "</p></header>";
  h += SummarySection(r, a);
  h += GenerationsSection(r);
  for (size_t i = 0; i < a.sessions.size(); ++i) h += SessionSection(r, a.sessions[i], i);
  h += ShardTimesSection(r, a);
  h += PhaseSection(a);
  h += BadRecordsSection(r, a);
  h += FailuresSection(r, a);
  if (scale) h += ScaleSection(*scale);
  h += AllShardsSection(r);
  std::string footer = "Written by fanfold " FANFOLD_VERSION " from " + Esc(r.dir) + ".";
  for (const std::string& w : r.warnings) footer += "<br>Note: " + Esc(w);
  return h + PageEnd(footer);
}

std::string RenderScaleHtml(const ScaleResult& s) {
  const std::string job = std::filesystem::path(s.job).stem().string();
  std::string h = PageStart("fanfold scale: " + job);
  h += "<header><h1>Scaling: " + Esc(job) + "</h1><p class=\"meta\">job <code>" + Esc(s.job) + "</code> · measured " +
       Esc(s.created) + "</p></header>";
  h += ScaleSection(s);
  return h + PageEnd("Written by fanfold " FANFOLD_VERSION " (fanfold scale).");
}

}  // namespace fanfold
