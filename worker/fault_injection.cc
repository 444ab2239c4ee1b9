#include "worker/fault_injection.h"

#include "common/partial/partial_codec.h"

#include <signal.h>
#include <unistd.h>

#include <charconv>
#include <cstring>
#include <chrono>
#include <cstdlib>
#include <sstream>
#include <thread>

namespace fanfold {
namespace {

bool ParseInt(const std::string& s, int64_t* out) {
  auto [p, ec] = std::from_chars(s.data(), s.data() + s.size(), *out);
  return ec == std::errc() && p == s.data() + s.size();
}

bool Matches(const FaultPlan::Fault& f, const ShardTask& t) {
  return f.shard == t.index && (f.attempt == 0 || f.attempt == t.attempt);
}

}  // namespace

Result<FaultPlan> FaultPlan::FromEnvironment() {
  const char* v = std::getenv("FANFOLD_TEST_ONLY_FAULTS");
  if (v == nullptr || *v == '\0') return FaultPlan{};
  return Parse(v);
}

Result<FaultPlan> FaultPlan::Parse(const std::string& text) {
  const std::string prefix = "inject:";
  auto bad = [&](const std::string& why) {
    return Status::InvalidArgument("FANFOLD_TEST_ONLY_FAULTS: " + why + " in '" + text + "'");
  };
  if (text.rfind(prefix, 0) != 0) return bad("expected the value to start with 'inject:'");
  FaultPlan plan;
  std::stringstream entries(text.substr(prefix.size()));
  std::string entry;
  while (std::getline(entries, entry, ';')) {
    if (entry.empty()) continue;
    size_t colon = entry.find(':');
    std::string kind = entry.substr(0, colon);
    Fault f;
    if (kind == "crash") f.kind = Kind::kCrash;
    else if (kind == "exit") f.kind = Kind::kExit;
    else if (kind == "stall") f.kind = Kind::kStall;
    else if (kind == "corrupt") f.kind = Kind::kCorrupt;
    else if (kind == "forge") f.kind = Kind::kForge;
    else return bad("unknown fault kind '" + kind + "' (expected crash, exit, stall, corrupt or forge)");
    bool have_shard = false;
    std::stringstream kvs(colon == std::string::npos ? "" : entry.substr(colon + 1));
    std::string kv;
    while (std::getline(kvs, kv, ',')) {
      size_t eq = kv.find('=');
      int64_t n = 0;
      if (eq == std::string::npos || !ParseInt(kv.substr(eq + 1), &n) || n < -1)
        return bad("expected key=integer, found '" + kv + "'");
      std::string key = kv.substr(0, eq);
      if (key == "shard") {
        f.shard = static_cast<uint32_t>(n);
        have_shard = true;
      } else if (key == "attempt") {
        f.attempt = static_cast<uint32_t>(n);
      } else if (key == "after") {
        f.after = static_cast<uint64_t>(n);
      } else if (key == "ms") {
        f.ms = n;
      } else if (key == "code") {
        f.code = static_cast<int>(n);
      } else {
        return bad("unknown key '" + key + "' (expected shard, attempt, after, ms or code)");
      }
    }
    if (!have_shard) return bad("fault '" + entry + "' has no shard=");
    plan.faults_.push_back(f);
  }
  return plan;
}

void FaultPlan::OnRecord(const ShardTask& task, uint64_t records) const {
  for (const Fault& f : faults_) {
    if (!Matches(f, task) || f.after != records) continue;
    switch (f.kind) {
      case Kind::kCrash: ::kill(::getpid(), SIGKILL); break;
      case Kind::kExit: ::_exit(f.code);
      case Kind::kStall:
        if (f.ms < 0) {
          for (;;) ::pause();
        }
        std::this_thread::sleep_for(std::chrono::milliseconds(f.ms));
        break;
      case Kind::kCorrupt:
      case Kind::kForge: break;
    }
  }
}

namespace {

// The forge fault: *partial again with its body (decompressed) one byte
// shorter, stored raw, its lengths and checksum made to match
// (common/partial/partial_codec.h: flags at byte 20, the body's two lengths
// at 104 and 112). Left as it was when it does not open.
void ForgeCutBody(std::string* partial) {
  OpenedPartial p;
  if (!OpenPartial(*partial, &p).ok() || p.body.empty()) return;
  p.body.pop_back();
  std::string out = partial->substr(0, kPartialHeaderSize) + p.body;
  const uint32_t flags = kPartialRawBody;
  const uint64_t len = p.body.size();
  std::memcpy(out.data() + 20, &flags, 4);
  std::memcpy(out.data() + 104, &len, 8);
  std::memcpy(out.data() + 112, &len, 8);
  SetPartialEncodeTime(p.header.encode_ns, &out);  // seals the checksum over the new body
  partial->swap(out);
}

}  // namespace

void FaultPlan::OnFinish(const ShardTask& task, std::string* partial) const {
  for (const Fault& f : faults_) {
    if (f.kind == Kind::kCorrupt && Matches(f, task) && !partial->empty()) {
      (*partial)[partial->size() / 2] ^= 0x10;
    }
    if (f.kind == Kind::kForge && Matches(f, task)) ForgeCutBody(partial);
  }
}

}  // namespace fanfold
