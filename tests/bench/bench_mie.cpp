// Speed of the Mie series: time per call and per series term (the counter ns_per_term is
// the time of one call divided by its number of terms N = mie_series_terms(x)).
#include <benchmark/benchmark.h>

#include <complex>

#include "holdfast/mie.hpp"

namespace {

void run(benchmark::State& state, std::complex<double> m) {
    const double x = static_cast<double>(state.range(0));
    const int terms = holdfast::mie_series_terms(x);
    holdfast::mie_sphere(m, x); // grow the thread's buffer outside the timed loop
    for (auto _ : state) {
        auto q = holdfast::mie_sphere(m, x);
        benchmark::DoNotOptimize(q);
    }
    state.counters["terms"] = terms;
    // Terms per nanosecond as a rate, inverted: nanoseconds per term.
    state.counters["ns_per_term"] =
        benchmark::Counter(1e-9 * terms * static_cast<double>(state.iterations()),
                           benchmark::Counter::kIsRate | benchmark::Counter::kInvert);
}

void BM_mie_1p7_0p03i(benchmark::State& state) { run(state, {1.7, 0.03}); }
void BM_mie_2p0_0p6i(benchmark::State& state) { run(state, {2.0, 0.6}); }

} // namespace

BENCHMARK(BM_mie_1p7_0p03i)->Arg(10)->Arg(100)->Arg(1000)->Arg(10000);
BENCHMARK(BM_mie_2p0_0p6i)->Arg(10)->Arg(100)->Arg(1000)->Arg(10000);
