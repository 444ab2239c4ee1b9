// Differential test of the NDJSON reader's grouped stage 1
// (NdjsonLineParser::IndexGroup / ParseGrouped, used by NdjsonReader for
// groups of lines): thousands of lines read together in one source, at
// several chunk sizes, give for every line what the same line read alone
// gives (a group of one line), and so the same malformed count and samples (line
// and reason). The lines: clean records and mutated ones (deleted, inserted or
// replaced bytes among brackets, quotes, backslashes, digits, letters, a
// control byte and bytes of invalid UTF-8), blank lines, CRLF line ends,
// strings left open and closed on a later line. Reading a line alone is
// itself checked against Python's json module in ndjson_checks_test.cc.
#include <doctest/doctest.h>

#include <algorithm>
#include <cstdint>
#include <random>
#include <string>
#include <vector>

#include "common/input/decode_ahead.h"
#include "common/input/ndjson_block_index.h"
#include "common/input/ndjson_line_parser.h"
#include "common/input/ndjson_reader.h"
#include "common/input/pointer_trie.h"
#include "tests/base/text_edit_test_util.h"
#include "tests/input/ndjson_test_util.h"
#include "tests/input/reader_test_util.h"

namespace fanfold {
namespace {

// Keeps each record as "line: slot0|slot1|...". It also borrows the
// strings as record_reader.h lets a sink during a loan: it keeps views of
// them and, when the loan ends, counts in `broken` the records that came
// outside a loan and the views whose bytes changed since their record came
// (escaped strings, which the parser unescapes into memory it reuses every
// line, and strings in a decode-ahead block, which goes back to be
// refilled).
class LineRows : public RecordSink {
 public:
  explicit LineRows(size_t n) : n_(n) {}
  void LendStrings() override {
    broken += in_loan ? 1 : 0;
    in_loan = true;
  }
  bool OnRecord(Value* slots) override {
    broken += in_loan ? 0 : 1;
    std::string row = std::to_string(record_line()) + ":";
    for (size_t i = 0; i < n_; ++i) {
      row += (i ? "|" : "") + Show(slots[i]);
      if (slots[i].kind == ValueKind::kString) lent_.push_back({slots[i].str, std::string(slots[i].str)});
    }
    rows.push_back(row);
    return true;
  }
  bool EndLoan() override {
    broken += in_loan ? 0 : 1;
    in_loan = false;
    for (const auto& [view, copy] : lent_) broken += view == copy ? 0 : 1;
    lent_.clear();
    return true;
  }
  std::vector<std::string> rows;
  bool in_loan = false;
  size_t broken = 0;

 private:
  size_t n_;
  std::vector<std::pair<std::string_view, std::string>> lent_;
};

std::vector<std::string> MakeLines(uint32_t seed, size_t count) {
  const std::vector<std::string> base = {
      R"({"ts":"2026-03-01T00:00:01.317Z","lamp":"L-70804","event":"heartbeat","latency_ms":19.65,"fw":{"version":"4.1.3","channel":"stable"},"readings":[9.6,65],"fault":null})",
      R"({"ts":"2026-03-01T00:00:03Z","lamp":"L-1\u00e9","power_w":49.2,"fw":{"ok":true,"n":-1e3},"readings":[],"fault":"F\"7"})",
      R"({"lamp":"L-2","power_w":-0.5e-2,"readings":[[1,2],{"a":false}],"x":"a\\b","fault":{"code":12}})",
      R"( {"power_w":18446744073709551615,"ts":1772323200,"z":[true,false,null,0.0,-0]} )",
      R"({"district":"Drummet \"Old Quay\"","lamp":"L-3","power_w":7})"};
  const std::string alphabet = "{}[],:\"\\ 0123456789.-+eEtrufalsnx#\x01\xC3\xA9\xFF";
  std::mt19937 rng(seed);
  std::vector<std::string> lines;
  while (lines.size() < count) {
    std::string l = base[rng() % base.size()];
    // Runs of 150 lines in turn: clean (records, blank lines, CRLF);
    // grammar errors only (bytes that leave every string closed and valid,
    // so stage 1 accepts the group and the walk must stop each line at its
    // own end); and anything (groups stage 1 refuses).
    const int run = static_cast<int>((lines.size() / 150) % 3);
    const uint32_t pick = rng() % 20;
    switch (run == 2 || pick < 3 ? pick : 99) {
      case 0: lines.push_back(""); continue;
      case 1: lines.push_back("  \t"); continue;
      case 2: l += "\r"; break;
      case 3: l = R"({"lamp":"open string)"; break;       // closed by a later line's odd quote
      case 4: l = R"(,"power_w":1,"x":"y"})"; break;      // an odd quote count
      case 5: l += "\\"; break;                           // a backslash before the line break
      default: break;
    }
    const std::string safe = "{}[],: 0123456789.-+eEtrufalsnx#";
    if (run != 0 && rng() % 2 == 0) {
      for (int e = 1 + static_cast<int>(rng() % 2); e > 0; --e) {
        const size_t at = rng() % (l.size() + 1);
        const char c = run == 1 ? safe[rng() % safe.size()] : alphabet[rng() % alphabet.size()];
        // Grammar errors only: no quote or backslash removed or replaced,
        // no byte put inside a string (between a quote and the next).
        if (run == 1 && at < l.size() && (l[at] == '"' || l[at] == '\\')) continue;
        if (run == 1 && std::count(l.begin(), l.begin() + static_cast<std::ptrdiff_t>(at), '"') % 2 == 1) continue;
        EditOneByte(&l, at, c, rng());
      }
    }
    if (l.find('\n') != std::string::npos) continue;  // a mutation never makes two lines of one
    lines.push_back(l);
  }
  return lines;
}

// What each line read alone gives: its records (renumbered to the line's
// number in the whole text), the malformed count and the first samples.
struct Alone {
  std::vector<std::string> rows;
  uint64_t malformed = 0;
  uint64_t grammar_malformed = 0;  // in the runs of grammar errors only
  std::vector<MalformedSample> samples;
  std::string text;  // the lines, each ended by a line break
};

Alone ReadAlone(const FieldTable& fields, const std::vector<std::string>& lines, ValueChecks checks) {
  auto alone = NdjsonReader::Create(fields, ChunkOptions{}, checks);
  REQUIRE(alone.ok());
  Alone a;
  for (size_t i = 0; i < lines.size(); ++i) {
    a.text += lines[i] + "\n";
    auto src = MemorySource(lines[i] + "\n");
    LineRows sink(fields.size());
    ReadStats st;
    REQUIRE((*alone)->Read(*src, sink, &st).ok());
    REQUIRE(st.records + st.malformed <= 1);
    if (st.malformed == 1) {
      ++a.malformed;
      if ((i / 150) % 3 == 1) ++a.grammar_malformed;
      if (a.samples.size() < ReadStats::kMaxSamples) a.samples.push_back({i + 1, st.samples.at(0).reason});
    }
    // A line alone is line 1: renumber it.
    for (const std::string& r : sink.rows) a.rows.push_back(std::to_string(i + 1) + r.substr(r.find(':')));
  }
  return a;
}

// Checks a whole read against the lines read alone.
void CheckSame(const Alone& want, const LineRows& sink, const ReadStats& st) {
  CHECK(st.malformed == want.malformed);
  REQUIRE(sink.rows.size() == want.rows.size());
  int differ = 0;
  for (size_t r = 0; r < want.rows.size(); ++r)
    if (sink.rows[r] != want.rows[r] && ++differ <= 5)
      FAIL_CHECK("together " << sink.rows[r] << "\nalone    " << want.rows[r]);
  CHECK(differ == 0);
  REQUIRE(st.samples.size() == want.samples.size());
  for (size_t s = 0; s < st.samples.size(); ++s) {
    CHECK(st.samples[s].line == want.samples[s].line);
    CHECK(st.samples[s].reason == want.samples[s].reason);
  }
}

// Intent: grouping lines for stage 1 changes no verdict, value, line number
// or count, whether a group holds a malformed line or not, wherever chunks
// and groups end; and the lines do include groups stage 1 refuses.
TEST_CASE("lines read together give what each line read alone gives") {
  const FieldTable fields = Fields({"/ts", "/lamp", "/power_w", "/fault", "/district"});
  const std::vector<std::string> lines = MakeLines(20261203, 8000);
  for (const ValueChecks checks : {ValueChecks::kReadValues, ValueChecks::kEveryValue}) {
    CAPTURE(static_cast<int>(checks));
    // Each line alone.
    auto alone = NdjsonReader::Create(fields, ChunkOptions{}, checks);
    REQUIRE(alone.ok());
    std::vector<std::string> want;
    uint64_t want_malformed = 0;
    uint64_t grammar_malformed = 0;  // in the runs of grammar errors only
    std::vector<MalformedSample> want_samples;
    std::string text;
    for (size_t i = 0; i < lines.size(); ++i) {
      text += lines[i] + "\n";
      auto src = MemorySource(lines[i] + "\n");
      LineRows sink(fields.size());
      ReadStats st;
      REQUIRE((*alone)->Read(*src, sink, &st).ok());
      REQUIRE(st.records + st.malformed <= 1);
      if (st.malformed == 1) {
        ++want_malformed;
        if ((i / 150) % 3 == 1) ++grammar_malformed;
        if (want_samples.size() < ReadStats::kMaxSamples) want_samples.push_back({i + 1, st.samples.at(0).reason});
      }
      // A line alone is line 1: renumber it.
      for (const std::string& r : sink.rows) want.push_back(std::to_string(i + 1) + r.substr(r.find(':')));
    }
    CHECK(want_malformed > 300);            // malformed lines in many groups
    CHECK(grammar_malformed > 300);         // also where stage 1 accepts the group
    CHECK(want.size() > lines.size() / 3);  // and many records
    // Groups of about 4 KiB as the reader cuts them: stage 1 accepts some
    // and refuses others (each then read line by line).
    int accepted = 0, refused = 0;
    NdjsonLineParser parser(checks);
    for (size_t at = 0; at < text.size();) {
      size_t end = text.find('\n', std::min(text.size(), at + 4096));
      if (end == std::string::npos) end = text.size();
      std::string group = text.substr(at, end - at);
      const size_t len = group.size();
      group.append(128, ' ');
      (parser.IndexGroup(group.data(), len, group.size()) ? accepted : refused) += 1;
      at = end + 1;
    }
    CHECK(accepted > 20);
    CHECK(refused > 20);
    MESSAGE(accepted << " groups accepted, " << refused << " refused");
    for (const size_t chunk : {size_t{1} << 20, size_t{5000}, size_t{777}}) {
      CAPTURE(chunk);
      auto together = NdjsonReader::Create(fields, ChunkOptions{chunk}, checks);
      REQUIRE(together.ok());
      auto src = MemorySource(text);
      LineRows sink(fields.size());
      ReadStats st;
      REQUIRE((*together)->Read(*src, sink, &st).ok());
      CHECK(sink.broken == 0);
      CHECK(st.malformed == want_malformed);
      REQUIRE(sink.rows.size() == want.size());
      int differ = 0;
      for (size_t r = 0; r < want.size(); ++r)
        if (sink.rows[r] != want[r] && ++differ <= 5) FAIL_CHECK("together " << sink.rows[r] << "\nalone    " << want[r]);
      CHECK(differ == 0);
      REQUIRE(st.samples.size() == want_samples.size());
      for (size_t s = 0; s < st.samples.size(); ++s) {
        CHECK(st.samples[s].line == want_samples[s].line);
        CHECK(st.samples[s].reason == want_samples[s].reason);
      }
    }
  }
}


// Passes a lender's blocks through and counts those that come with groups
// the reader's study indexed (so a test knows the helper's indexes were
// there to use).
class WatchedSource final : public ByteSource, public BlockLender {
 public:
  explicit WatchedSource(ByteSource* inner) : inner_(inner), lender_(inner->lender()) {}
  Result<size_t> Read(char* dst, size_t cap) override { return inner_->Read(dst, cap); }
  uint64_t compressed_bytes() const override { return inner_->compressed_bytes(); }
  BlockLender* lender() override { return this; }
  void SetStudy(std::shared_ptr<BlockStudy> study) override {
    study_ = study.get();
    lender_->SetStudy(std::move(study));
  }
  Result<size_t> Lend(LentBlock* out) override {
    Result<size_t> n = lender_->Lend(out);
    if (n.ok() && *n > 0) {
      ++blocks;
      const auto* index = dynamic_cast<const NdjsonBlockIndex*>(out->note.get());
      if (index != nullptr && index->maker == study_ && study_ != nullptr)
        for (const NdjsonBlockIndex::Group& g : index->groups) {
          indexed_groups += g.indexed ? 1 : 0;
          parsed_groups += g.parsed ? 1 : 0;
        }
    }
    return n;
  }
  int blocks = 0;
  int indexed_groups = 0;
  int parsed_groups = 0;  // of those, the groups the study also parsed

 private:
  ByteSource* inner_;
  BlockLender* lender_;
  const BlockStudy* study_ = nullptr;
};

// Intent: the indexes the block study makes (on the decode-ahead thread)
// are exactly those the reader's own stage 1 makes of the same group of
// lines, its groups cover exactly the block's whole lines, a group stage 1
// refuses is marked refused, and an indexed group's lines are cut where
// its line breaks are, each with the indexes before its break; wherever
// the block's edges cut a line.
TEST_CASE("a block's index is what the reader's own stage 1 makes of its groups") {
  const std::vector<std::string> lines = MakeLines(7, 900);
  std::string text;
  for (const std::string& l : lines) text += l + "\n";
  NdjsonBlockStudy study;
  NdjsonLineParser own;
  std::unique_ptr<BlockNote> note = std::make_unique<BlockNote>();  // of another kind: replaced
  int indexed = 0, refused = 0;
  for (size_t cut = 30000; cut < 30400; ++cut) {  // every position of a few lines
    const size_t size = 40000 + cut % 7;  // a run of clean lines and one of mutated ones
    std::string block = text.substr(cut, size);
    block.append(4096, 'x');  // readable after the block, not space
    study.Study(block.data(), size, 4096, &note);
    const auto* index = dynamic_cast<const NdjsonBlockIndex*>(note.get());
    REQUIRE(index != nullptr);
    const std::string_view bytes(block.data(), size);
    REQUIRE(!index->groups.empty());
    CHECK(index->groups.front().begin == bytes.find('\n') + 1);
    CHECK(index->groups.back().end == bytes.rfind('\n'));
    for (size_t g = 0; g < index->groups.size(); ++g) {
      const NdjsonBlockIndex::Group& gr = index->groups[g];
      CAPTURE(cut);
      CAPTURE(g);
      if (g > 0) CHECK(gr.begin == index->groups[g - 1].end + 1);
      REQUIRE(bytes[gr.end] == '\n');
      std::string copy = block.substr(gr.begin, gr.end - gr.begin);
      const size_t len = copy.size();
      copy.append(128, ' ');
      const bool accepted = own.IndexGroup(copy.data(), len, copy.size());
      REQUIRE(accepted == gr.indexed);
      (accepted ? indexed : refused) += 1;
      if (!accepted) continue;
      const uint32_t* idx = nullptr;
      size_t n = 0;
      own.GroupIndexes(&idx, &n);
      REQUIRE(n == gr.count);
      CHECK(idx[n] == len);
      CHECK(std::equal(idx, idx + n + 1, index->indexes.begin() + gr.first));
      // Its lines, each line of the group (empty ones too) in order: where
      // it ends, and the first of the group's indexes past it.
      size_t line_begin = gr.begin;
      REQUIRE(gr.first_line + gr.line_count <= index->lines.size());
      for (uint32_t l = 0; l < gr.line_count; ++l) {
        const NdjsonBlockIndex::Line& line = index->lines[gr.first_line + l];
        CHECK(line.end == bytes.find('\n', line_begin));
        const size_t past = static_cast<size_t>(std::lower_bound(idx, idx + n, line.end - gr.begin) - idx);
        CHECK(line.index_end == past);
        line_begin = line.end + 1;
      }
      CHECK(line_begin == gr.end + 1);  // the last line ends the group
    }
  }
  CHECK(indexed > 100);
  CHECK(refused > 100);
  // A block without two line breaks has no whole line to index.
  for (const std::string& b : {std::string("{\"a\":1}"), std::string("{\"a\":1}\n{\"b\":")}) {
    std::string block = b + std::string(4096, ' ');
    study.Study(block.data(), b.size(), 4096, &note);
    CHECK(static_cast<const NdjsonBlockIndex*>(note.get())->groups.empty());
  }
}

// Intent: the study parses a group only while its records' slots fit the
// note's budget (kNdjsonParsedBytes): short lines of a wide job are only
// indexed, those of a narrow one parsed one group in kNdjsonParseEvery.
TEST_CASE("the block study parses groups within its budget for slots") {
  std::string text;
  while (text.size() < 200000) text += "{}\n";
  text.append(4096, ' ');
  for (const size_t width : {size_t{1}, size_t{1000}}) {
    CAPTURE(width);
    FieldTable fields;
    for (size_t f = 0; f < width; ++f) fields.InternField("/f" + std::to_string(f));
    Result<std::vector<PointerNode>> nodes = BuildPointerTrie(fields);
    REQUIRE(nodes.ok());
    NdjsonBlockStudy study(*nodes, width, ValueChecks::kReadValues);
    std::unique_ptr<BlockNote> note;
    study.Study(text.data(), text.size() - 4096, 4096, &note);
    const auto* index = dynamic_cast<const NdjsonBlockIndex*>(note.get());
    REQUIRE(index != nullptr);
    size_t parsed = 0;
    for (const NdjsonBlockIndex::Group& g : index->groups) parsed += g.parsed ? 1 : 0;
    CHECK(index->groups.size() > 40);
    CHECK(index->values.size() * sizeof(Value) <= kNdjsonParsedBytes);
    if (width == 1) CHECK(parsed == index->groups.size() / kNdjsonParseEvery);
    if (width == 1000) CHECK(parsed == 0);
  }
}

// Intent: read through decode ahead, threaded (the block study indexing
// whole lines on the helper, the reader the lines cut by the blocks'
// edges) or inline (the reader indexing all), every line gives what it gives read
// alone — the same records, values, line numbers, malformed count and
// samples — wherever the edges cut (malformed lines and strings left open
// across an edge included), and the study's indexes, and the lines it
// parsed (NdjsonBlockIndex::Group::parsed), were in use.
TEST_CASE("lines read through decode ahead give what each line read alone gives") {
  const FieldTable fields = Fields({"/ts", "/lamp", "/power_w", "/fault", "/district"});
  const std::vector<std::string> lines = MakeLines(20261204, 1800);
  for (const ValueChecks checks : {ValueChecks::kReadValues, ValueChecks::kEveryValue}) {
    CAPTURE(static_cast<int>(checks));
    const Alone want = ReadAlone(fields, lines, checks);
    CHECK(want.malformed > 50);
    auto reader = NdjsonReader::Create(fields, ChunkOptions{}, checks);
    REQUIRE(reader.ok());
    std::vector<std::pair<bool, size_t>> runs;  // threaded, block bytes
    for (size_t b = 6000; b < 6260; ++b) runs.push_back({true, b});  // every edge position of a line or two
    for (size_t b : {size_t{100}, size_t{777}, size_t{4096}, size_t{65536}, kAheadBlockBytes}) {
      runs.push_back({false, b});
      runs.push_back({true, b});
    }
    for (const auto& [threaded, block] : runs) {
      CAPTURE(threaded);
      CAPTURE(block);
      DecodeAhead ahead(threaded, block);
      std::unique_ptr<ByteSource> src = ahead.Wrap(MemorySource(want.text));
      WatchedSource watched(src.get());
      LineRows sink(fields.size());
      ReadStats st;
      REQUIRE((*reader)->Read(watched, sink, &st).ok());
      CheckSame(want, sink, st);
      CHECK(sink.broken == 0);
      CHECK(!sink.in_loan);
      // Threaded, the helper indexed the blocks; inline, the reader did.
      if (threaded && block >= 4096) CHECK(watched.indexed_groups >= watched.blocks / 2);
      // ... and parsed one group in kNdjsonParseEvery of them.
      if (threaded && block >= 4096) CHECK(watched.parsed_groups >= watched.indexed_groups / 10);
      if (!threaded) CHECK(watched.indexed_groups == 0);
    }
  }
}

}  // namespace
}  // namespace fanfold
