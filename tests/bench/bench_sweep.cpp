// Speed of a beta sweep (holdfast sweep's engine, run_sweep): rows per second with 1 and 2
// worker threads, wall-clock time, and the ratio of the medians. The sweep: a Veyra-like star
// at 2 luminosities and 4 temperatures, silicate at 8 porosities, 200 radii from 0.01 um to
// 1 mm: 32 spectral-mean curves (each shared by the 2 luminosities), 12 800 rows. Each
// iteration starts from an empty cache, as one command run does.
//   build-bench/tests/bench/bench_sweep --benchmark_repetitions=5
//   --benchmark_report_aggregates_only=true
// Counters: rows_per_s; busy_cores, the process's CPU time over the wall time (2 when both
// threads never wait; the engine's own losses show here, apart from the machine's); and in
// BM_thread_scaling the median over pairs of back-to-back runs (1 thread and 2, in turns first)
// of the ratio of their wall times. On a machine shared with other jobs the speed drifts by tens of
// percent over seconds; a pair sees nearly the same conditions, so its ratio is steadier than the
// ratio of two medians taken a minute apart.
#include <benchmark/benchmark.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <ctime>
#include <map>
#include <string>
#include <vector>

#include "holdfast/sweep.hpp"

namespace {

const char* spec_text = R"(
quantities = ["qpr_mean", "beta", "bound"]
radii = "0.01um..1mm"
points = 200

[[star]]
label = "Veyra"
luminosity = ["0.1 Lsun", "0.34 Lsun"]
mass = "0.78 Msun"
teff = ["4400 K", "4800 K", "5200 K", "5600 K"]

[[material]]
name = "silicate"
porosity = [0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7]
)";

double process_cpu_s() {
    timespec t{};
    clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t);
    return double(t.tv_sec) + 1e-9 * double(t.tv_nsec);
}

double wall_s() {
    return std::chrono::duration<double>(std::chrono::steady_clock::now().time_since_epoch())
        .count();
}

// One whole sweep; returns the rows written.
std::uint64_t sweep_once(const holdfast::SweepSpec& spec, unsigned threads) {
    holdfast::SweepRunOptions options;
    options.threads = threads;
    std::size_t bytes = 0;
    const auto out = holdfast::run_sweep(
        spec, options, [&](const holdfast::SweepChunk& c) { bytes += c.text.size(); });
    benchmark::DoNotOptimize(bytes);
    return out.rows_delivered;
}

void BM_beta_sweep(benchmark::State& state) {
    const holdfast::SweepSpec spec = holdfast::parse_sweep_spec(spec_text, "bench.toml", "");
    std::uint64_t rows = 0;
    double cpu = 0.0, wall = 0.0;
    for (auto _ : state) {
        const double c0 = process_cpu_s(), w0 = wall_s();
        rows += sweep_once(spec, static_cast<unsigned>(state.range(0)));
        cpu += process_cpu_s() - c0;
        wall += wall_s() - w0;
    }
    state.counters["rows_per_s"] = benchmark::Counter(double(rows), benchmark::Counter::kIsRate);
    state.counters["busy_cores"] = wall > 0.0 ? cpu / wall : 0.0;
}
BENCHMARK(BM_beta_sweep)->Arg(1)->Arg(2)->UseRealTime()->Unit(benchmark::kMillisecond);

void BM_thread_scaling(benchmark::State& state) {
    const holdfast::SweepSpec spec = holdfast::parse_sweep_spec(spec_text, "bench.toml", "");
    std::vector<double> ratios;
    bool one_first = true;
    for (auto _ : state) {
        // Alternate which runs first, in case the first or second run of a pair is favoured
        // (a core left idle for a second may take a while to come back to full speed).
        double seconds[2] = {0.0, 0.0}; // 1 thread, 2 threads
        for (int k = 0; k < 2; ++k) {
            const int threads = (k == 0) == one_first ? 1 : 2;
            const double t0 = wall_s();
            sweep_once(spec, static_cast<unsigned>(threads));
            seconds[threads - 1] = wall_s() - t0;
        }
        ratios.push_back(seconds[0] / seconds[1]);
        one_first = !one_first;
    }
    std::sort(ratios.begin(), ratios.end());
    const std::size_t n = ratios.size();
    state.counters["pair_ratio"] = n ? 0.5 * (ratios[(n - 1) / 2] + ratios[n / 2]) : 0.0;
}
BENCHMARK(BM_thread_scaling)->Iterations(6)->UseRealTime()->Unit(benchmark::kMillisecond);

// Keeps the median rows/s of each thread count to print their ratio at the end.
class RatioReporter : public benchmark::ConsoleReporter {
  public:
    void ReportRuns(const std::vector<Run>& runs) override {
        for (const auto& r : runs) {
            if (r.run_type == Run::RT_Aggregate && r.aggregate_name != "median") continue;
            if (const auto p = r.counters.find("pair_ratio"); p != r.counters.end())
                pair_ratio = p->second.value;
            const auto it = r.counters.find("rows_per_s");
            if (it == r.counters.end()) continue;
            // Without repetitions the single run stands for the median.
            medians[r.run_name.args] = it->second.value;
        }
        ConsoleReporter::ReportRuns(runs);
    }
    std::map<std::string, double> medians;
    double pair_ratio = 0.0;
};

} // namespace

int main(int argc, char** argv) {
    benchmark::Initialize(&argc, argv);
    if (benchmark::ReportUnrecognizedArguments(argc, argv)) return 1;
    RatioReporter reporter;
    benchmark::RunSpecifiedBenchmarks(&reporter);
    benchmark::Shutdown();
    const auto one = reporter.medians.find("1"), two = reporter.medians.find("2");
    if (one != reporter.medians.end() && two != reporter.medians.end() && one->second > 0)
        std::printf("median rows/s: 1 thread %.0f, 2 threads %.0f, ratio %.2f (target >= 1.8)\n",
                    one->second, two->second, two->second / one->second);
    if (reporter.pair_ratio > 0.0)
        std::printf("median over back-to-back pairs of the wall-time ratio 1 thread / 2 threads: "
                    "%.2f (target >= 1.8)\n",
                    reporter.pair_ratio);
    return 0;
}
