// The sweep's process model when holdfast is built without MPI: one process does everything.
#include "sweep_cli.hpp"

#ifndef HOLDFAST_WITH_MPI
namespace holdfast::cli {

const SweepProcess& current_sweep_process() {
    static const SweepProcess single;
    return single;
}

} // namespace holdfast::cli
#endif
