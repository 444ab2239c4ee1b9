#include "common/transport/launcher_environment.h"

#include <cstdlib>
#include <string>

namespace fanfold {
namespace {

// The variable's value as a whole number >= 0, or -1 if unset or not one.
int WholeVariable(const char* name) {
  const char* v = std::getenv(name);
  if (v == nullptr || *v == '\0') return -1;
  int n = 0;
  for (const char* p = v; *p; ++p) {
    if (*p < '0' || *p > '9' || n > 1'000'000) return -1;
    n = n * 10 + (*p - '0');
  }
  return n;
}

}  // namespace

LauncherEnvironment ReadLauncherEnvironment() {
  LauncherEnvironment e;
  const int size = WholeVariable("OMPI_COMM_WORLD_SIZE");
  int rank = WholeVariable("OMPI_COMM_WORLD_RANK");
  if (rank < 0) rank = WholeVariable("PMIX_RANK");
  if (size < 0 && rank < 0) return e;
  e.launched = true;
  e.rank = rank < 0 ? 0 : rank;
  e.size = size < 1 ? 1 : size;
  return e;
}

}  // namespace fanfold
