#include "coordinator/transport_factory.h"

#include "coordinator/inprocess_transport.h"

namespace fanfold {

Result<std::unique_ptr<Transport>> MakeTransport(const Plan& plan, const RunOptions& options, int workers) {
  std::unique_ptr<Transport> t = std::make_unique<InProcessTransport>(&plan, workers);
  return t;
}

}  // namespace fanfold
