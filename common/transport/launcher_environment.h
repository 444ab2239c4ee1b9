// LauncherEnvironment: whether an MPI launcher (mpirun/mpiexec) started this
// process, read from the variables it sets (Open MPI: OMPI_COMM_WORLD_SIZE
// and OMPI_COMM_WORLD_RANK; PMIx launchers: PMIX_RANK), before MPI is
// initialised and whether or not fanfold was built with MPI. Values;
// thread-safe.
#pragma once

namespace fanfold {

struct LauncherEnvironment {
  bool launched = false;  // a launcher's variables are present
  int rank = 0;           // this process's rank (0 when unknown)
  int size = 1;           // ranks in the job (1 when unknown)
};

LauncherEnvironment ReadLauncherEnvironment();

}  // namespace fanfold
