// Speed of a temperature curve: one grain (radius 1 um) around the Sun at 100 log-spaced
// distances from 0.1 to 100 au (the defaults of 'holdfast temperature'), from scratch each
// iteration as one command run does: <Q_abs> in starlight, the Planck mean as a function of
// the grain's temperature, and the 100 root searches. The target: at most 0.2 s on one
// core. Cases: the shipped silicate (absorbing), ice (nearly transparent, k = 1e-4), and a
// tabulated index (an invented silicate-like table with 10 and 18 um bands, for timing only:
// tabulated optical constants take Q_abs on nodes fixed per grain, PlanckNodeRule), and an
// invented nearly transparent ice-like table (k from 1e-8 to 1e-3: narrow resonances).
#include <cmath>
#include <vector>

#include <benchmark/benchmark.h>
#include <gsl/gsl_errno.h>

#include "holdfast/grain.hpp"
#include "holdfast/material.hpp"
#include "holdfast/parse.hpp"
#include "holdfast/star.hpp"
#include "holdfast/units.hpp"

namespace {

// As in main.cpp: GSL reports failures by status, which the core turns into exceptions.
const auto gsl_handler = gsl_set_error_handler_off();

std::shared_ptr<const holdfast::OpticalConstants> invented_table() {
    holdfast::NkTable t;
    t.source = "invented for the benchmark";
    t.format = "in memory";
    for (double lam : holdfast::log_spaced(0.05, 1.0e4, 300)) {
        const double l10 = std::log(lam / 10.0) / 0.15;
        const double l18 = std::log(lam / 18.0) / 0.2;
        const double k = 0.03 + 0.8 * std::exp(-l10 * l10) + 0.4 * std::exp(-l18 * l18);
        t.rows.push_back({lam, 1.7, k});
    }
    return holdfast::tabulated_index(std::move(t));
}

std::shared_ptr<const holdfast::OpticalConstants> invented_transparent_table() {
    holdfast::NkTable t;
    t.source = "invented for the benchmark";
    t.format = "in memory";
    const std::vector<double> wl = holdfast::log_spaced(0.05, 1.0e5, 121);
    for (std::size_t i = 0; i < wl.size(); ++i) {
        const double f = static_cast<double>(i) / static_cast<double>(wl.size() - 1);
        const double wiggle = (i % 2 == 0 ? 1.0 : -1.0) * 5e-4;
        t.rows.push_back({wl[i], 1.31 + 0.02 * f + wiggle, 1e-8 * std::pow(1e5, f)});
    }
    return holdfast::tabulated_index(std::move(t));
}

void run(benchmark::State& state, std::shared_ptr<const holdfast::OpticalConstants> core) {
    const holdfast::Star sun = holdfast::sun();
    holdfast::GrainOptics optics;
    optics.core = std::move(core);
    const holdfast::GrainEfficiencySettings settings; // the command's defaults
    const double radius_um = 1.0;
    std::vector<holdfast::Length> distances;
    for (double au : holdfast::log_spaced(0.1, 100.0, 100))
        distances.push_back(holdfast::astronomical_units(au));
    long planck_means = 0;
    for (auto _ : state) {
        const auto q_star = holdfast::starlight_qabs_mean(optics, sun.spectrum, settings);
        const holdfast::PlanckMean planck = holdfast::planck_qabs_mean(optics, radius_um, settings);
        const holdfast::GrainTemperatureModel model(sun.luminosity, sun.radius,
                                                    q_star.mean(radius_um), [&](double t_K) {
                                                        ++planck_means;
                                                        return planck(t_K);
                                                    });
        const std::vector<holdfast::Temperature> t = model.temperatures(distances);
        benchmark::DoNotOptimize(t.back().value());
    }
    // Planck means evaluated per distance: the root searches' cost in units of the spectral
    // quadrature.
    state.counters["planck_means_per_distance"] =
        double(planck_means) / double(state.iterations() * distances.size());
}

void BM_temperature_curve_silicate_1um(benchmark::State& state) {
    run(state, holdfast::shipped_material("silicate").optics);
}
void BM_temperature_curve_ice_1um(benchmark::State& state) {
    run(state, holdfast::shipped_material("ice").optics);
}
void BM_temperature_curve_tabulated_1um(benchmark::State& state) { run(state, invented_table()); }
void BM_temperature_curve_tabulated_transparent_1um(benchmark::State& state) {
    run(state, invented_transparent_table());
}

} // namespace

BENCHMARK(BM_temperature_curve_silicate_1um)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_temperature_curve_ice_1um)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_temperature_curve_tabulated_1um)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_temperature_curve_tabulated_transparent_1um)->Unit(benchmark::kMillisecond);
