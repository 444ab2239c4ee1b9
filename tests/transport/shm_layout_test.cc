// The shared-memory layout: geometry, initialise/attach checks, bounded text.
#include "common/transport/shm_layout.h"

#include <doctest/doctest.h>

#include <cstring>
#include <vector>

namespace fanfold {
namespace {

// Intent: result areas are page-rounded and start page-aligned after the channels.
TEST_CASE("ShmGeometry rounds and places the result areas") {
  auto g = ShmGeometry::Make(3, 5000);
  REQUIRE(g.ok());
  CHECK(g->result_area_bytes == 8192);
  CHECK(g->results_offset() == kHeaderBytes + 3 * kChannelBytes);
  CHECK(g->results_offset() % kPageBytes == 0);
  CHECK(g->total_bytes() == g->results_offset() + 3 * 8192);
  CHECK_FALSE(ShmGeometry::Make(0, 8192).ok());
  CHECK_FALSE(ShmGeometry::Make(2, 100).ok());
}

// Intent: a worker attaches to what the coordinator initialised and rejects a wrong magic,
// version or a mapping shorter than the header claims.
TEST_CASE("ShmView::Attach checks what Initialize wrote") {
  auto g = ShmGeometry::Make(2, 4096);
  REQUIRE(g.ok());
  std::vector<uint64_t> mem(g->total_bytes() / 8, 0);  // 8-byte aligned, zeroed
  auto v = ShmView::Initialize(mem.data(), g->total_bytes(), *g, 4242, "/tmp/spill");
  REQUIRE(v.ok());
  auto a = ShmView::Attach(mem.data(), g->total_bytes());
  REQUIRE(a.ok());
  CHECK(a->worker_count() == 2);
  CHECK(a->header().coordinator_pid == 4242);
  CHECK(a->spill_dir() == "/tmp/spill");
  CHECK(a->result_area(1) - a->result_area(0) == 4096);
  CHECK(reinterpret_cast<char*>(&a->channel(1)) - reinterpret_cast<char*>(&a->channel(0)) ==
        static_cast<long>(kChannelBytes));
  CHECK_FALSE(ShmView::Attach(mem.data(), g->total_bytes() - 1).ok());
  a->header().version = kShmVersion + 1;
  CHECK(ShmView::Attach(mem.data(), g->total_bytes()).status().message().find("version") !=
        std::string::npos);
  a->header().version = kShmVersion;
  a->header().magic ^= 1;
  CHECK(ShmView::Attach(mem.data(), g->total_bytes()).status().message().find("magic") !=
        std::string::npos);
  a->header().magic ^= 1;
  v->Destroy();
}

// Intent: semaphores in the segment count posts; a timed wait without a post times out.
TEST_CASE("ShmView semaphores post and time out") {
  auto g = ShmGeometry::Make(1, 4096);
  REQUIRE(g.ok());
  std::vector<uint64_t> mem(g->total_bytes() / 8, 0);
  auto v = ShmView::Initialize(mem.data(), g->total_bytes(), *g, 1, "");
  REQUIRE(v.ok());
  CHECK_FALSE(SemWaitFor(v->work_sem(0), 20));
  SemPost(v->work_sem(0));
  SemPost(v->work_sem(0));
  CHECK(SemWaitFor(v->work_sem(0), 0));
  CHECK(SemWaitFor(v->work_sem(0), 0));
  CHECK_FALSE(SemWaitFor(v->work_sem(0), 0));
  v->Destroy();
}

// Intent: text is cut before a character that would not fit whole (UTF-8, RFC 3629 byte forms:
// continuation bytes are 10xxxxxx).
TEST_CASE("CopyBoundedText never splits a UTF-8 character") {
  char buf[8];
  CHECK(CopyBoundedText("abc", buf, sizeof buf) == 3);
  CHECK(CopyBoundedText("abcdefgh", buf, sizeof buf) == 8);
  // "aa" + U+20AC (E2 82 AC) x2 = 8 bytes; with room for 7 the second euro sign must go.
  CHECK(CopyBoundedText("aa\xe2\x82\xac\xe2\x82\xac", buf, 7) == 5);
  CHECK(std::memcmp(buf, "aa\xe2\x82\xac", 5) == 0);
  // U+1F600 (F0 9F 98 80), 4 bytes, cut anywhere inside: nothing of it stays.
  CHECK(CopyBoundedText("\xf0\x9f\x98\x80", buf, 3) == 0);
}

}  // namespace
}  // namespace fanfold
