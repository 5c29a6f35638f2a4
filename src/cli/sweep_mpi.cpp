// holdfast sweep across MPI ranks (built with -DHOLDFAST_WITH_MPI=ON, started by mpirun).
// Rank r computes the blocks b with b % size == r on its own threads and sends each block's
// rows to rank 0, which writes every block in order: the CSV is the same bytes as one
// process writes. Only the main thread of each rank calls MPI (MPI_THREAD_FUNNELED); rank 0
// computes its own blocks on a helper thread meanwhile.
//
// Stopping: a rank that stops (SIGINT/SIGTERM, which mpirun forwards to every rank) sends an
// end marker after its last block; rank 0 stops at the first block it cannot get, tells the
// other ranks to stop, and drains their messages up to their end markers, so the file ends
// with complete rows in order and --resume continues it. A computation error on any rank
// aborts the whole job (MPI_Abort) after printing it: the CSV then still holds complete rows
// in order, and the sidecar says "running".
#ifdef HOLDFAST_WITH_MPI
#include <atomic>
#include <chrono>
#include <condition_variable>
#include <cstdio>
#include <cstdlib>
#include <deque>
#include <exception>
#include <iostream>
#include <map>
#include <mutex>
#include <thread>

#include <mpi.h>

#include "holdfast/errors.hpp"
#include "sweep_cli.hpp"

namespace holdfast::cli {
namespace {

constexpr int tag_header = 1;
constexpr int tag_text = 2;
constexpr int tag_stop = 3;
constexpr int tag_final = 4;
constexpr std::uint64_t end_marker = ~std::uint64_t(0);

// Started by mpirun (Open MPI or a PMI launcher such as Slurm's srun)? Without one, holdfast
// runs as a single process and does not initialise MPI at all.
bool launched_by_mpi() {
    for (const char* v : {"OMPI_COMM_WORLD_SIZE", "PMI_SIZE", "PMIX_RANK"})
        if (std::getenv(v)) return true;
    return false;
}

[[noreturn]] void abort_job(const std::string& what, int rank) {
    std::cerr << "holdfast: rank " << rank << ": " << what << " (aborting the MPI job)\n";
    MPI_Abort(MPI_COMM_WORLD, 1);
    std::abort();
}

class MpiProcess final : public SweepProcess {
  public:
    MpiProcess() {
        int provided = 0;
        MPI_Init_thread(nullptr, nullptr, MPI_THREAD_FUNNELED, &provided);
        MPI_Comm_rank(MPI_COMM_WORLD, &rank_);
        MPI_Comm_size(MPI_COMM_WORLD, &size_);
        // The run's summary is printed once, by rank 0.
        if (rank_ != 0 && !std::freopen("/dev/null", "w", stdout))
            abort_job("cannot silence standard output", rank_);
    }
    ~MpiProcess() override {
        int finalized = 0;
        MPI_Finalized(&finalized);
        if (!finalized) MPI_Finalize();
    }
    MpiProcess(const MpiProcess&) = delete;
    MpiProcess& operator=(const MpiProcess&) = delete;

    bool is_writer() const override { return rank_ == 0; }
    int processes() const override { return size_; }
    std::uint64_t broadcast(std::uint64_t value) const override {
        MPI_Bcast(&value, 1, MPI_UINT64_T, 0, MPI_COMM_WORLD);
        return value;
    }

    SweepOutcome run(const SweepSpec& spec, const SweepRunOptions& options,
                     const std::function<void(const SweepChunk&)>& deliver) const override {
        if (size_ == 1) return run_sweep(spec, options, deliver);
        try {
            return rank_ == 0 ? run_writer(spec, options, deliver) : run_worker(spec, options);
        } catch (const std::exception& e) {
            abort_job(e.what(), rank_);
        }
    }

  private:
    // Ranks other than 0: compute, send every block, then the end marker.
    SweepOutcome run_worker(const SweepSpec& spec, SweepRunOptions options) const {
        bool told_to_stop = false;
        const auto local_stop = options.stop_requested;
        options.block_stride = std::uint64_t(size_);
        options.block_offset = std::uint64_t(rank_);
        options.stop_requested = [&] {
            int flag = 0;
            MPI_Iprobe(0, tag_stop, MPI_COMM_WORLD, &flag, MPI_STATUS_IGNORE);
            if (flag) told_to_stop = true;
            return told_to_stop || (local_stop && local_stop());
        };
        SweepOutcome out = run_sweep(spec, options, [&](const SweepChunk& c) { send(c); });
        SweepChunk end;
        end.block = end_marker;
        send(end);
        // Rank 0 answers every end marker with how many stop messages it sent this rank
        // (0 or 1); receive that many, so that no message is left unreceived.
        std::uint64_t stops_sent = 0;
        MPI_Recv(&stops_sent, 1, MPI_UINT64_T, 0, tag_final, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
        if (stops_sent) {
            std::uint64_t dummy = 0;
            MPI_Recv(&dummy, 1, MPI_UINT64_T, 0, tag_stop, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
            out.stopped = true;
        }
        return out;
    }

    void send(const SweepChunk& c) const {
        std::uint64_t header[4] = {c.block, c.first_row, c.rows, c.text.size()};
        MPI_Send(header, 4, MPI_UINT64_T, 0, tag_header, MPI_COMM_WORLD);
        if (!c.text.empty())
            MPI_Send(c.text.data(), static_cast<int>(c.text.size()), MPI_CHAR, 0, tag_text,
                     MPI_COMM_WORLD);
    }

    static SweepChunk receive(int from) {
        std::uint64_t header[4];
        MPI_Recv(header, 4, MPI_UINT64_T, from, tag_header, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
        SweepChunk c;
        c.block = header[0];
        c.first_row = header[1];
        c.rows = header[2];
        c.text.resize(header[3]);
        if (header[3] > 0)
            MPI_Recv(c.text.data(), static_cast<int>(header[3]), MPI_CHAR, from, tag_text,
                     MPI_COMM_WORLD, MPI_STATUS_IGNORE);
        return c;
    }

    // Rank 0: its own blocks on a helper thread; every block written in order from here.
    SweepOutcome run_writer(const SweepSpec& spec, const SweepRunOptions& options,
                            const std::function<void(const SweepChunk&)>& deliver) const {
        const SweepShape shape = sweep_shape(spec);
        const std::uint64_t rpb = shape.rows_per_block();
        SweepOutcome outcome;
        if (rpb == 0 || options.first_row >= shape.rows()) {
            for (int r = 1; r < size_; ++r) {
                (void)receive(r); // each worker sends only its end marker
                std::uint64_t none = 0;
                MPI_Send(&none, 1, MPI_UINT64_T, r, tag_final, MPI_COMM_WORLD);
            }
            return outcome;
        }
        std::mutex mutex;
        std::condition_variable cv;
        std::map<std::uint64_t, SweepChunk> local;
        bool local_done = false;
        std::exception_ptr local_error;
        std::atomic<bool> stop_local{false};
        SweepOutcome local_outcome;

        SweepRunOptions mine = options;
        mine.block_stride = std::uint64_t(size_);
        mine.block_offset = 0;
        mine.stop_requested = [&] { return stop_local.load(); };
        std::thread helper([&] {
            try {
                local_outcome = run_sweep(spec, mine, [&](const SweepChunk& c) {
                    const std::lock_guard<std::mutex> lock(mutex);
                    local.emplace(c.block, c);
                    cv.notify_all();
                });
            } catch (...) {
                const std::lock_guard<std::mutex> lock(mutex);
                local_error = std::current_exception();
            }
            const std::lock_guard<std::mutex> lock(mutex);
            local_done = true;
            cv.notify_all();
        });

        std::vector<bool> ended(std::size_t(size_), false);
        bool stopped = false;
        for (std::uint64_t b = options.first_row / rpb; b < shape.blocks() && !stopped; ++b) {
            if (options.stop_requested && options.stop_requested()) {
                stopped = true;
                break;
            }
            const int owner = int(b % std::uint64_t(size_));
            SweepChunk chunk;
            if (owner == 0) {
                std::unique_lock<std::mutex> lock(mutex);
                while (!local.count(b) && !local_done && !local_error) {
                    if (options.stop_requested && options.stop_requested()) break;
                    cv.wait_for(lock, std::chrono::milliseconds(50));
                }
                if (local_error) break;
                if (!local.count(b)) {
                    stopped = true;
                    break;
                }
                chunk = std::move(local.at(b));
                local.erase(b);
            } else {
                chunk = receive(owner);
                if (chunk.block == end_marker) {
                    ended[std::size_t(owner)] = true;
                    stopped = true;
                    break;
                }
                if (chunk.block != b)
                    throw InternalError("MPI sweep: rank " + std::to_string(owner) +
                                        " sent block " + std::to_string(chunk.block) +
                                        " where block " + std::to_string(b) + " was due");
            }
            deliver(chunk);
            outcome.rows_delivered += chunk.rows;
        }

        // Stop everyone still running, then receive what they still send up to their ends.
        stop_local.store(true);
        std::vector<std::uint64_t> stops_sent(std::size_t(size_), 0);
        if (stopped)
            for (int r = 1; r < size_; ++r)
                if (!ended[std::size_t(r)]) {
                    std::uint64_t one = 1;
                    MPI_Send(&one, 1, MPI_UINT64_T, r, tag_stop, MPI_COMM_WORLD);
                    stops_sent[std::size_t(r)] = 1;
                }
        for (int r = 1; r < size_; ++r) {
            while (!ended[std::size_t(r)])
                if (receive(r).block == end_marker) ended[std::size_t(r)] = true;
            MPI_Send(&stops_sent[std::size_t(r)], 1, MPI_UINT64_T, r, tag_final, MPI_COMM_WORLD);
        }
        helper.join();
        if (local_error) std::rethrow_exception(local_error);
        outcome.stopped = stopped;
        outcome.notes = local_outcome.notes;
        return outcome;
    }

    int rank_ = 0;
    int size_ = 1;
};

} // namespace

const SweepProcess& current_sweep_process() {
    if (!launched_by_mpi()) {
        static const SweepProcess single;
        return single;
    }
    static const MpiProcess mpi;
    return mpi;
}

} // namespace holdfast::cli
#endif
