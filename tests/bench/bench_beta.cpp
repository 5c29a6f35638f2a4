// Speed of the beta curve: <Q_pr> from Mie theory averaged over the Sun's Planck spectrum at
// 200 log-spaced radii from 0.01 um to 1 mm (the defaults of 'holdfast beta'), with a fresh
// edge-fit cache each iteration, as one command run has. Also a nearly transparent material
// (ice) and a coated grain (silicate core in an ice mantle).
#include <benchmark/benchmark.h>

#include <cmath>
#include <memory>
#include <vector>

#include "holdfast/grain.hpp"
#include "holdfast/material.hpp"
#include "holdfast/parse.hpp"
#include "holdfast/star.hpp"

namespace {

// The timed part of every case: one <Q_pr> curve over 200 radii from 0.01 um to 1 mm, on
// `threads` threads (SpectralEfficiency::curve, as 'holdfast beta --threads'), 1 by default.
void time_curve(benchmark::State& state, const holdfast::GrainOptics& optics,
                const std::shared_ptr<const holdfast::Spectrum>& spectrum,
                const holdfast::GrainEfficiencySettings& settings, unsigned threads = 1) {
    const std::vector<double> radii = holdfast::log_spaced(0.01, 1000.0, 200);
    for (auto _ : state) {
        const auto q = holdfast::starlight_qpr_mean(optics, spectrum, settings);
        double sum = 0.0;
        for (double v : q.curve(radii, threads, nullptr))
            sum += v;
        benchmark::DoNotOptimize(sum);
    }
}

void run(benchmark::State& state, const char* material, double tolerance,
         const char* mantle = nullptr, double core_fraction = 1.0, unsigned threads = 1) {
    const holdfast::Star sun = holdfast::sun();
    holdfast::GrainOptics optics;
    optics.core = holdfast::shipped_material(material).optics;
    if (mantle != nullptr) {
        optics.mantle = holdfast::shipped_material(mantle).optics;
        optics.core_radius_fraction = core_fraction;
    }
    holdfast::GrainEfficiencySettings settings;
    settings.spectral.relative_tolerance = tolerance;
    time_curve(state, optics, sun.spectrum, settings, threads);
}

void BM_beta_curve_silicate_tol1e5(benchmark::State& state) { run(state, "silicate", 1e-5); }
void BM_beta_curve_silicate_tol1e6(benchmark::State& state) { run(state, "silicate", 1e-6); }
void BM_beta_curve_carbon_tol1e5(benchmark::State& state) { run(state, "carbon", 1e-5); }
// The same curves on 1 and 2 threads (wall-clock time: the argument is the thread count).
void BM_beta_curve_silicate_tol1e4_threads(benchmark::State& state) {
    run(state, "silicate", 1e-4, nullptr, 1.0, static_cast<unsigned>(state.range(0)));
}
void BM_beta_curve_ice_tol1e5_threads(benchmark::State& state) {
    run(state, "ice", 1e-5, nullptr, 1.0, static_cast<unsigned>(state.range(0)));
}
// Nearly transparent (k = 1e-4): narrow Mie resonances.
void BM_beta_curve_ice_tol1e5(benchmark::State& state) { run(state, "ice", 1e-5); }
// A silicate core in an ice mantle, core radius 0.8 of the grain's.
void BM_beta_curve_silicate_in_ice_tol1e5(benchmark::State& state) {
    run(state, "silicate", 1e-5, "ice", 0.8);
}

// Tabulated nearly transparent constants (91 rows over 0.1-100 um, n 1.31-1.33, k 1e-8 to
// 1e-4 log-linear; the band limited to the table): the wavelength rule, Q afresh per radius.
void BM_beta_curve_tabulated_transparent_tol1e5(benchmark::State& state) {
    holdfast::NkTable table;
    table.source = "synthetic";
    const std::vector<double> wl = holdfast::log_spaced(0.1, 100.0, 91);
    for (std::size_t i = 0; i < wl.size(); ++i) {
        const double f = static_cast<double>(i) / static_cast<double>(wl.size() - 1);
        table.rows.push_back({wl[i], 1.31 + 0.02 * f, 1e-8 * std::pow(1e4, f)});
    }
    const holdfast::Star sun = holdfast::sun();
    holdfast::GrainOptics optics;
    optics.core = holdfast::tabulated_index(table);
    holdfast::GrainEfficiencySettings settings;
    settings.out_of_band = holdfast::OutOfBand::limit_band;
    time_curve(state, optics, sun.spectrum, settings);
}

} // namespace

BENCHMARK(BM_beta_curve_tabulated_transparent_tol1e5)->Unit(benchmark::kMillisecond)->Iterations(1);
BENCHMARK(BM_beta_curve_silicate_tol1e5)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_beta_curve_silicate_tol1e6)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_beta_curve_carbon_tol1e5)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_beta_curve_ice_tol1e5)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_beta_curve_silicate_in_ice_tol1e5)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_beta_curve_silicate_tol1e4_threads)
    ->Arg(1)
    ->Arg(2)
    ->UseRealTime()
    ->Unit(benchmark::kMillisecond);
BENCHMARK(BM_beta_curve_ice_tol1e5_threads)
    ->Arg(1)
    ->Arg(2)
    ->UseRealTime()
    ->Unit(benchmark::kMillisecond);
