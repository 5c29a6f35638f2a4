// Speed of the beta curve: <Q_pr> from Mie theory averaged over the Sun's Planck spectrum at
// 200 log-spaced radii from 0.01 um to 1 mm (the defaults of 'holdfast beta'), with a fresh
// edge-fit cache each iteration, as one command run has. Also a nearly transparent material
// (ice) and a coated grain (silicate core in an ice mantle).
#include <benchmark/benchmark.h>

#include "holdfast/grain.hpp"
#include "holdfast/material.hpp"
#include "holdfast/parse.hpp"
#include "holdfast/star.hpp"

namespace {

void run(benchmark::State& state, const char* material, double tolerance,
         const char* mantle = nullptr, double core_fraction = 1.0) {
    const holdfast::Star sun = holdfast::sun();
    holdfast::GrainOptics optics;
    optics.core = holdfast::shipped_material(material).optics;
    if (mantle != nullptr) {
        optics.mantle = holdfast::shipped_material(mantle).optics;
        optics.core_radius_fraction = core_fraction;
    }
    holdfast::GrainEfficiencySettings settings;
    settings.spectral.relative_tolerance = tolerance;
    const std::vector<double> radii = holdfast::log_spaced(0.01, 1000.0, 200);
    for (auto _ : state) {
        const auto q = holdfast::starlight_qpr_mean(optics, sun.spectrum, settings);
        double sum = 0.0;
        for (double s : radii)
            sum += q.mean(s);
        benchmark::DoNotOptimize(sum);
    }
}

void BM_beta_curve_silicate_tol1e5(benchmark::State& state) { run(state, "silicate", 1e-5); }
void BM_beta_curve_silicate_tol1e6(benchmark::State& state) { run(state, "silicate", 1e-6); }
void BM_beta_curve_carbon_tol1e5(benchmark::State& state) { run(state, "carbon", 1e-5); }
// Nearly transparent (k = 1e-4): narrow Mie resonances.
void BM_beta_curve_ice_tol1e5(benchmark::State& state) { run(state, "ice", 1e-5); }
// A silicate core in an ice mantle, core radius 0.8 of the grain's.
void BM_beta_curve_silicate_in_ice_tol1e5(benchmark::State& state) {
    run(state, "silicate", 1e-5, "ice", 0.8);
}

} // namespace

BENCHMARK(BM_beta_curve_silicate_tol1e5)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_beta_curve_silicate_tol1e6)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_beta_curve_carbon_tol1e5)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_beta_curve_ice_tol1e5)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_beta_curve_silicate_in_ice_tol1e5)->Unit(benchmark::kMillisecond);
