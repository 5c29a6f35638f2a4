// Speed of a beta sweep (holdfast sweep's engine, run_sweep): rows per second with 1 and 2
// worker threads, wall-clock time, and the ratio of the medians. The sweep: a Veyra-like star
// at 2 luminosities and 4 temperatures, silicate at 8 porosities, 200 radii from 0.01 um to
// 1 mm: 32 spectral-mean curves (each shared by the 2 luminosities), 12 800 rows. Each
// iteration starts from an empty cache, as one command run does.
//   build-bench/tests/bench/bench_sweep --benchmark_repetitions=5
//   --benchmark_report_aggregates_only=true
#include <benchmark/benchmark.h>

#include <cstdio>
#include <map>
#include <string>

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

void BM_beta_sweep(benchmark::State& state) {
    const holdfast::SweepSpec spec = holdfast::parse_sweep_spec(spec_text, "bench.toml", "");
    holdfast::SweepRunOptions options;
    options.threads = static_cast<unsigned>(state.range(0));
    std::uint64_t rows = 0;
    for (auto _ : state) {
        std::size_t bytes = 0;
        const auto out = holdfast::run_sweep(
            spec, options, [&](const holdfast::SweepChunk& c) { bytes += c.text.size(); });
        benchmark::DoNotOptimize(bytes);
        rows += out.rows_delivered;
    }
    state.counters["rows_per_s"] = benchmark::Counter(double(rows), benchmark::Counter::kIsRate);
}
BENCHMARK(BM_beta_sweep)->Arg(1)->Arg(2)->UseRealTime()->Unit(benchmark::kMillisecond);

// Keeps the median rows/s of each thread count to print their ratio at the end.
class RatioReporter : public benchmark::ConsoleReporter {
  public:
    void ReportRuns(const std::vector<Run>& runs) override {
        for (const auto& r : runs) {
            const auto it = r.counters.find("rows_per_s");
            if (it == r.counters.end()) continue;
            if (r.run_type == Run::RT_Aggregate && r.aggregate_name != "median") continue;
            // Without repetitions the single run stands for the median.
            medians[r.run_name.args] = it->second.value;
        }
        ConsoleReporter::ReportRuns(runs);
    }
    std::map<std::string, double> medians;
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
    return 0;
}
