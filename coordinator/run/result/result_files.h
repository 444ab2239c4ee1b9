// The files a result is written to (coordinator/run/result/result_stream.h): the
// run directory's copy and the shown file, both temporaries (StagedFile)
// renamed into place only by PublishFiles, the run directory's
// first; dropped unpublished, they remove their temporaries, so a result
// that fails half-way leaves nothing of itself. Helpers of the output
// stage; coordinator main thread only.
#pragma once

#include <cstdint>
#include <memory>
#include <vector>

#include "common/base/status.h"
#include "common/port/files/durable_write.h"
#include "coordinator/output/row_writer.h"
#include "coordinator/run/result/result_stream.h"

namespace fanfold {

inline constexpr uint64_t kPollRows = 4096;  // rows between should_stop polls

inline Status StopStatus() { return Status::Interrupted("interrupted while writing the result"); }

// One copy of the result being written: its options and where its bytes go.
struct Copy {
  RenderOptions options;
  RowWriter::Sink sink;
};

// The run directory's copy, and the shown file when it is one (stdout is
// written after, from the ordered rows).
struct Files {
  std::unique_ptr<StagedFile> kept;
  std::unique_ptr<StagedFile> shown;
  Status shown_failed;  // the shown file could not be begun: reported after the kept copy is in place
  std::vector<Copy> copies;
};

Status OpenFiles(Platform& platform, const ResultStreamTargets& t, Files* f);
// Publishes the kept copy, then the shown file (or reports why there is none).
Status PublishFiles(Files& f);

}  // namespace fanfold
