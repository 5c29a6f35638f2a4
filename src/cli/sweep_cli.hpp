#pragma once
// How the sweep command runs its blocks: in this process only, or split across MPI ranks
// (HOLDFAST_WITH_MPI, sweep_mpi.cpp) with rank 0 writing every row in order.
#include <cstdint>
#include <functional>
#include <string>

#include "holdfast/sweep.hpp"

namespace holdfast::cli {

class SweepProcess {
  public:
    virtual ~SweepProcess() = default;
    // Whether this process writes the CSV, the sidecar and the progress bar.
    virtual bool is_writer() const { return true; }
    virtual int processes() const { return 1; }
    // The writer's value, on every process.
    virtual std::uint64_t broadcast(std::uint64_t value) const { return value; }
    // Runs the sweep; `deliver` is called on the writer only, for every block in order.
    virtual SweepOutcome run(const SweepSpec& spec, const SweepRunOptions& options,
                             const std::function<void(const SweepChunk&)>& deliver) const {
        return run_sweep(spec, options, deliver);
    }
};

// The single process, or this MPI rank when built with MPI and started by mpirun.
const SweepProcess& current_sweep_process();

// The sweep file's text; InputError naming FILE if it does not exist.
std::string read_text_file_checked(const std::string& path);

} // namespace holdfast::cli
