// Efficiencies of a grain from Mie theory, averaged over a stellar spectrum or over a Planck
// curve at the grain's own temperature: the bridge between mie.hpp, material.hpp and
// spectral_mean.hpp on one side and the grain physics of grain.cpp on the other.
//
// References
//   Bohren, C. F. & Huffman, D. R. 1983, Absorption and Scattering of Light by Small
//     Particles (Wiley): Q_pr = Q_ext - g Q_sca (eq. 4.68 ff.), coated spheres (sec. 8.1).
//   Burns, Lamy & Soter 1979, Icarus 40, 1, eq. 19: the spectrum-weighted <Q_pr>.
//   Toon, O. B. & Ackerman, T. P. 1981, Appl. Opt. 20, 3657: the coated-sphere algorithm
//     behind mie_coated_sphere.
//   van de Hulst, H. C. 1957, Light Scattering by Small Particles (Wiley; Dover 1981),
//     ch. 12 and 17: geometric optics as the large-sphere limit, approached with corrections
//     from the edge of the sphere that fall off with x.
//
// Large spheres. The efficiencies of an absorbing sphere approach their geometric-optics
// values with a difference that, measured against the exact series for x from 1e3 to 1e5
// and several indices, follows a/x + b x^(-4/3) closely. Fitting a and b to the series at
// x_c and 2 x_c for each refractive index (cached: a constant index needs one fit) leaves a
// relative error below 3e-5 in Q_pr and 6e-5 in Q_abs for k >= 1e-3, and 1e-4 for k = 1e-4;
// x_c = max(1000, 1/k) keeps the internal rays damped (tests/grain_optics_test.cpp). Where k x >=
// 100 every refracted ray is absorbed within its first chord, so the geometric-optics part no
// longer depends on x and is cached too. This is what makes a 200-radius beta curve up to
// millimetre grains fast: the series is never summed beyond x_c.
#include <algorithm>
#include <atomic>
#include <cmath>
#include <exception>
#include <numbers>
#include <optional>
#include <string>
#include <thread>
#include <unordered_map>

#include "grain_spectral_rule.hpp"
#include "holdfast/errors.hpp"
#include "holdfast/grain.hpp"

namespace holdfast {
namespace {

using std::numbers::pi;

// The band and optics to integrate with, after the out-of-band choice, for both components
// of a coated grain.
struct Plan {
    GrainOptics optics;
    WavelengthBand band;
    double dropped_flux_fraction = 0.0;
    std::string note;
};

Plan plan(const GrainOptics& optics, const Spectrum& spectrum,
          const GrainEfficiencySettings& settings) {
    Plan p;
    p.optics = optics;
    const SpectralBandPlan core =
        plan_spectral_band(spectrum, optics.core, settings.out_of_band, settings.spectral);
    p.optics.core = core.optics;
    p.band = core.band;
    p.note = core.note;
    if (optics.mantle) {
        const SpectralBandPlan mantle =
            plan_spectral_band(spectrum, optics.mantle, settings.out_of_band, settings.spectral);
        p.optics.mantle = mantle.optics;
        p.band.low_um = std::max(p.band.low_um, mantle.band.low_um);
        p.band.high_um = std::min(p.band.high_um, mantle.band.high_um);
        if (!(p.band.low_um < p.band.high_um))
            throw InputError("the core's and the mantle's optical constants have no common "
                             "wavelength range inside the spectrum's band");
        if (!mantle.note.empty()) p.note += (p.note.empty() ? "" : " ") + mantle.note;
    }
    if (settings.out_of_band == OutOfBand::limit_band) {
        const WavelengthBand full =
            integration_band(spectrum, settings.spectral.excluded_flux_fraction);
        p.dropped_flux_fraction = std::max(0.0, flux_fraction_in_band(spectrum, full) -
                                                    flux_fraction_in_band(spectrum, p.band));
    }
    return p;
}

} // namespace

void check_grain_optics(const GrainOptics& optics) {
    if (!optics.core) throw InputError("the grain has no optical constants");
    if (optics.mantle && !(optics.core_radius_fraction > 0.0 && optics.core_radius_fraction <= 1.0))
        throw InputError("the core's radius fraction must be in (0, 1], got " +
                         std::to_string(optics.core_radius_fraction));
}

namespace {

// Geometric optics no longer depends on x once k x reaches this (exp(-4 k x cos theta_t) of
// the first chord is below e^-100 except at grazing incidence, whose weight vanishes).
constexpr double absorbed_kx = 100.0;

// The large-sphere model for one refractive index.
struct EdgeFit {
    double x_c = 0.0; // the model is used above this size parameter
    double a_pr = 0.0, b_pr = 0.0, a_abs = 0.0, b_abs = 0.0;
    std::optional<MieEfficiencies> absorbed; // geometric optics for k x >= absorbed_kx
};

// x_c for index m, or 0 when the series is used at every size.
double edge_fit_start(std::complex<double> m, double large_sphere_from_x) {
    if (!(large_sphere_from_x > 0.0) || !(m.imag() > 0.0)) return 0.0;
    const double x_c = std::max({large_sphere_from_x, 1.0 / m.imag(), MieRange::x_min_geometric});
    return 2.0 * x_c <= MieRange::x_max_series ? x_c : 0.0;
}

EdgeFit make_edge_fit(std::complex<double> m, double x_c) {
    EdgeFit f;
    f.x_c = x_c;
    const double x1 = x_c, x2 = 2.0 * x_c;
    const MieEfficiencies s1 = mie_sphere(m, x1), s2 = mie_sphere(m, x2);
    const MieEfficiencies g1 = mie_geometric_optics(m, x1), g2 = mie_geometric_optics(m, x2);
    // Solve a / x + b x^(-4/3) = series - geometric optics at x1 and x2 (2x2, Cramer's rule).
    const double p1 = 1.0 / x1, q1 = std::pow(x1, -4.0 / 3.0);
    const double p2 = 1.0 / x2, q2 = std::pow(x2, -4.0 / 3.0);
    const double det = p1 * q2 - q1 * p2;
    auto solve = [&](double d1, double d2, double& a, double& b) {
        a = (d1 * q2 - q1 * d2) / det;
        b = (p1 * d2 - p2 * d1) / det;
    };
    solve(s1.q_pr - g1.q_pr, s2.q_pr - g2.q_pr, f.a_pr, f.b_pr);
    solve(s1.q_abs - g1.q_abs, s2.q_abs - g2.q_abs, f.a_abs, f.b_abs);
    return f;
}

MieEfficiencies edge_corrected(std::complex<double> m, double x, EdgeFit& f) {
    MieEfficiencies e;
    if (m.imag() * x >= absorbed_kx) {
        if (!f.absorbed)
            f.absorbed = mie_geometric_optics(m, std::max(absorbed_kx / m.imag(), f.x_c));
        e = *f.absorbed;
    } else {
        e = mie_geometric_optics(m, x);
    }
    const double x43 = std::pow(x, -4.0 / 3.0);
    e.q_pr += f.a_pr / x + f.b_pr * x43;
    e.q_abs += f.a_abs / x + f.b_abs * x43;
    return e;
}

struct IndexHash {
    std::size_t operator()(const std::complex<double>& m) const noexcept {
        const std::hash<double> h;
        return h(m.real()) ^ (h(m.imag()) * 1000003u);
    }
};

// Edge fits per refractive index, shared by every radius of one spectral mean (the same
// wavelength nodes recur, and a constant index needs one fit in all). Bounded in size.
class EdgeFitCache {
  public:
    MieEfficiencies efficiencies(const GrainOptics& optics, double radius_um, double wavelength_um,
                                 double large_sphere_from_x) {
        const double x = 2.0 * pi * radius_um / wavelength_um;
        if (optics.mantle && optics.core_radius_fraction < 1.0)
            return grain_efficiencies(optics, radius_um, wavelength_um,
                                      settings_for(large_sphere_from_x));
        const std::complex<double> m = optics.core->index_at_um(wavelength_um);
        const double x_c = edge_fit_start(m, large_sphere_from_x);
        if (x_c == 0.0 || x <= x_c) return mie_sphere_any_size(m, x);
        auto it = fits_.find(m);
        if (it == fits_.end()) {
            if (fits_.size() > 100000) fits_.clear();
            it = fits_.emplace(m, make_edge_fit(m, x_c)).first;
        }
        return edge_corrected(m, x, it->second);
    }

  private:
    static GrainEfficiencySettings settings_for(double large_sphere_from_x) {
        GrainEfficiencySettings s;
        s.large_sphere_from_x = large_sphere_from_x;
        return s;
    }
    std::unordered_map<std::complex<double>, EdgeFit, IndexHash> fits_;
};

} // namespace

MieEfficiencies grain_efficiencies(const GrainOptics& optics, double radius_um,
                                   double wavelength_um, const GrainEfficiencySettings& settings) {
    // Size parameter x = 2 pi s / lambda with the radius s (Bohren & Huffman 1983, eq. 4.50).
    const double x = 2.0 * pi * radius_um / wavelength_um;
    const std::complex<double> m_core = optics.core->index_at_um(wavelength_um);
    if (optics.mantle && optics.core_radius_fraction < 1.0) {
        const std::complex<double> m_mantle = optics.mantle->index_at_um(wavelength_um);
        return mie_coated_sphere_any_size(m_core, m_mantle, x * optics.core_radius_fraction, x);
    }
    const double x_c = edge_fit_start(m_core, settings.large_sphere_from_x);
    if (x_c == 0.0 || x <= x_c) return mie_sphere_any_size(m_core, x);
    EdgeFit fit = make_edge_fit(m_core, x_c);
    return edge_corrected(m_core, x, fit);
}

namespace {

// Which quadrature a spectral mean uses. The fixed rule (grain_spectral_rule.cpp) is fast for
// a grain whose index does not depend on wavelength (every shipped material, porous or coated),
// including the nearly transparent ones on which the adaptive quadrature chases resonance
// spikes for minutes. Indices that vary with wavelength (tabulated optical constants) use its
// companion rule in ln(lambda) (WavelengthRuleCurve). Tolerances tighter than they are built
// for (below 1e-7) keep the adaptive quadrature with the large-sphere shortcut of this file
// for starlight means, which is also what the accuracy tests use as their reference; Planck
// means there, and of every index that varies with wavelength, take PlanckNodeRule (Q_abs on
// nodes fixed per grain, see planck_qabs_mean).
bool use_fixed_rule(const GrainEfficiencySettings& settings) {
    return settings.spectral.relative_tolerance >= detail::fixed_rule_tightest_tolerance;
}

bool stopped(const std::atomic<bool>* stop) {
    return stop != nullptr && stop->load(std::memory_order_relaxed);
}

// Runs body(t) for t = 0..threads-1, t = 0 on the calling thread, and waits for all.
// `body` must not throw.
void on_threads(unsigned threads, const std::function<void(unsigned)>& body) {
    std::vector<std::thread> pool;
    pool.reserve(threads - 1);
    for (unsigned t = 1; t < threads; ++t)
        pool.emplace_back(body, t);
    body(0);
    for (auto& th : pool)
        th.join();
}

// <Q> at each radius, radii taken from a shared counter by `threads` threads, thread t
// calling means[t] (callables with caches of their own). A failure is rethrown after all
// threads finish: the one at the smallest radius index, the error a serial loop would raise.
std::vector<double> means_on_threads(const std::vector<MeanEfficiency>& means,
                                     std::span<const double> radii_um,
                                     const std::atomic<bool>* stop) {
    std::vector<double> out(radii_um.size(), 0.0);
    std::vector<std::exception_ptr> errors(radii_um.size());
    std::atomic<std::size_t> next{0};
    on_threads(static_cast<unsigned>(means.size()), [&](unsigned t) {
        for (std::size_t i = next++; i < radii_um.size() && !stopped(stop); i = next++) {
            try {
                out[i] = means[t](radii_um[i]);
            } catch (...) {
                errors[i] = std::current_exception();
            }
        }
    });
    if (stopped(stop)) return {};
    for (const auto& e : errors)
        if (e) std::rethrow_exception(e);
    return out;
}

SpectralEfficiency starlight_mean(const GrainOptics& optics,
                                  std::shared_ptr<const Spectrum> spectrum,
                                  const GrainEfficiencySettings& settings, bool pressure);

// A curve on several threads for any spectral mean: the calling thread uses `mean`, every
// other thread a spectral mean of its own from starlight_mean (its caches start empty).
MeanEfficiencyCurve curve_on_threads(const MeanEfficiency& mean, const GrainOptics& optics,
                                     const std::shared_ptr<const Spectrum>& spectrum,
                                     const GrainEfficiencySettings& settings, bool pressure) {
    return [mean, optics, spectrum, settings, pressure](
               std::span<const double> radii_um, unsigned threads, const std::atomic<bool>* stop) {
        if (radii_um.empty()) return std::vector<double>{};
        threads = static_cast<unsigned>(std::clamp<std::size_t>(threads, 1, radii_um.size()));
        std::vector<MeanEfficiency> means{mean};
        for (unsigned t = 1; t < threads; ++t)
            means.push_back(starlight_mean(optics, spectrum, settings, pressure).mean);
        return means_on_threads(means, radii_um, stop);
    };
}

SpectralEfficiency starlight_mean(const GrainOptics& optics,
                                  std::shared_ptr<const Spectrum> spectrum,
                                  const GrainEfficiencySettings& settings, bool pressure) {
    check_grain_optics(optics);
    if (!spectrum) throw InputError("the star has no spectrum");
    const Plan p = plan(optics, *spectrum, settings);
    SpectralEfficiency out;
    out.band = p.band;
    out.dropped_flux_fraction = p.dropped_flux_fraction;
    out.note = p.note;
    const double x_large = settings.large_sphere_from_x;
    const SpectralMeanSettings sm = settings.spectral;
    const GrainOptics po = p.optics;
    const WavelengthBand band = p.band;
    auto q = use_fixed_rule(settings)
                 ? std::make_shared<detail::SmoothedGrainQ>(
                       po, x_large, detail::fixed_rule_density(sm.relative_tolerance))
                 : nullptr;
    const std::optional<detail::FixedRuleLattice> lattice =
        q ? std::optional(detail::fixed_rule_lattice(*q, band)) : std::nullopt;
    if (lattice && detail::fixed_rule_suits(*lattice)) {
        auto curve = std::make_shared<detail::FixedRuleCurve>(q, *lattice);
        const std::vector<double> kinks = sm.breakpoints_um;
        auto mean_of = [spectrum, band, kinks,
                        pressure](std::shared_ptr<detail::FixedRuleCurve> c) -> MeanEfficiency {
            return [c, spectrum, band, kinks, pressure](double radius_um) {
                const detail::FixedRuleMeans r = c->means(*spectrum, band, radius_um, kinks);
                return pressure ? r.q_pr : r.q_abs;
            };
        };
        out.mean = mean_of(curve);
        // The panels in x first, shared out between the threads, then the radii.
        out.curve = [curve, mean_of, po, x_large, sm, band](std::span<const double> radii_um,
                                                            unsigned threads,
                                                            const std::atomic<bool>* stop) {
            if (radii_um.empty()) return std::vector<double>{};
            threads = static_cast<unsigned>(std::clamp<std::size_t>(threads, 1, radii_um.size()));
            std::vector<std::shared_ptr<detail::FixedRuleCurve>> curves{curve};
            for (unsigned t = 1; t < threads; ++t)
                curves.push_back(std::make_shared<detail::FixedRuleCurve>(
                    std::make_shared<detail::SmoothedGrainQ>(
                        po, x_large, detail::fixed_rule_density(sm.relative_tolerance)),
                    curve->lattice()));
            // The threads share one large-sphere model (a constant index has one): the
            // calling thread builds it while the others start on the costliest series
            // panels, then all take the panels above the limit, which use it, and the rest.
            const detail::FixedRuleCurve::MissingPanels panels =
                curve->missing_panels(band, radii_um);
            const double wavelength_um = curve->lattice().reference_wavelength_um;
            const bool shared = threads > 1 && !panels.model.empty() &&
                                curve->grain_q().prepare_shared_model(wavelength_um);
            if (shared)
                for (unsigned t = 1; t < threads; ++t)
                    curve->grain_q().share_models_with(curves[t]->grain_q());
            std::atomic<bool> model_ready{!shared};
            detail::FixedRuleCurve::PanelCounters next;
            std::vector<std::exception_ptr> errors(threads);
            on_threads(threads, [&](unsigned t) {
                try {
                    if (t == 0 && shared) curve->grain_q().complete_models();
                } catch (...) {
                    errors[t] = std::current_exception();
                    next.model.store(panels.model.size()); // nobody uses the broken model
                }
                if (t == 0) model_ready.store(true, std::memory_order_release);
                if (errors[t]) return;
                try {
                    curves[t]->compute_panels(panels, next, model_ready, stop);
                } catch (...) {
                    errors[t] = std::current_exception();
                }
            });
            for (const auto& e : errors)
                if (e) std::rethrow_exception(e);
            for (unsigned t = 1; t < threads; ++t)
                curve->adopt_panels(*curves[t]);
            if (stopped(stop)) return std::vector<double>{};
            std::vector<MeanEfficiency> means;
            for (unsigned t = 0; t < threads; ++t) {
                if (t > 0) curves[t]->adopt_panels(*curve);
                means.push_back(mean_of(curves[t]));
            }
            return means_on_threads(means, radii_um, stop);
        };
        return out;
    }
    if (lattice) {
        // An index that varies with wavelength: the rule in ln(lambda), whose large-sphere
        // models are built for many indices, so with cheaper windows (grain_spectral_rule.cpp).
        detail::FixedRuleDensity d = q->density();
        d.window_periods_per_panel = 2.0 * d.periods_per_panel;
        d.window_ln_floor = 0.01;
        auto tab = std::make_shared<detail::SmoothedGrainQ>(po, x_large, d);
        auto curve = std::make_shared<detail::WavelengthRuleCurve>(tab, band, sm.breakpoints_um);
        out.mean = [curve, spectrum, pressure](double radius_um) {
            const detail::FixedRuleMeans r = curve->means(*spectrum, radius_um);
            return pressure ? r.q_pr : r.q_abs;
        };
        out.curve = curve_on_threads(out.mean, optics, spectrum, settings, pressure);
        return out;
    }
    auto cache = std::make_shared<EdgeFitCache>();
    out.mean = [po, band, sm, x_large, spectrum, pressure, cache](double radius_um) {
        const std::function<double(double)> qf = [&](double wavelength_um) {
            const MieEfficiencies e = cache->efficiencies(po, radius_um, wavelength_um, x_large);
            return pressure ? e.q_pr : e.q_abs;
        };
        return spectral_mean(qf, *spectrum, band, sm);
    };
    out.curve = curve_on_threads(out.mean, optics, spectrum, settings, pressure);
    return out;
}

} // namespace

SpectralEfficiency starlight_qpr_mean(const GrainOptics& optics,
                                      std::shared_ptr<const Spectrum> spectrum,
                                      const GrainEfficiencySettings& settings) {
    return starlight_mean(optics, std::move(spectrum), settings, true);
}

SpectralEfficiency starlight_qabs_mean(const GrainOptics& optics,
                                       std::shared_ptr<const Spectrum> spectrum,
                                       const GrainEfficiencySettings& settings) {
    return starlight_mean(optics, std::move(spectrum), settings, false);
}

PlanckMean planck_qabs_mean(const GrainOptics& optics, double radius_um,
                            const GrainEfficiencySettings& settings) {
    check_grain_optics(optics);
    if (!(radius_um > 0.0) || !std::isfinite(radius_um))
        throw InputError("the grain radius must be positive");
    const bool fixed = use_fixed_rule(settings);
    const detail::FixedRuleDensity density =
        detail::fixed_rule_density(settings.spectral.relative_tolerance);
    // The optics the node rule evaluates Q_abs of: wrapped once for hold_end_values (the same
    // function of wavelength as the wrapper plan() makes at each temperature), so its values
    // serve every band.
    GrainOptics node_optics = optics;
    if (settings.out_of_band == OutOfBand::hold_end_values) {
        node_optics.core = with_held_end_values(optics.core);
        if (optics.mantle) node_optics.mantle = with_held_end_values(optics.mantle);
    }
    // One SmoothedGrainQ and one FixedRuleCurve for every temperature while the optics and
    // the lattice stay the same: the panels are fixed in x, so a constant index meets the same
    // size parameters at every temperature. Other grains (tabulated indices; tolerances below
    // 1e-7) take Q_abs at nodes fixed in ln(lambda), computed once (PlanckNodeRule).
    std::shared_ptr<detail::SmoothedGrainQ> q;
    std::shared_ptr<detail::FixedRuleCurve> curve;
    std::shared_ptr<detail::PlanckNodeRule> nodes;
    return [optics, node_optics, radius_um, settings, fixed, density, q, curve,
            nodes](double temperature_K) mutable {
        const std::shared_ptr<const Spectrum> planck = planck_spectrum(kelvin(temperature_K));
        const Plan p = plan(optics, *planck, settings);
        if (fixed) {
            if (!q || q->optics().core != p.optics.core || q->optics().mantle != p.optics.mantle) {
                q = std::make_shared<detail::SmoothedGrainQ>(p.optics, settings.large_sphere_from_x,
                                                             density);
                curve.reset();
            }
            const detail::FixedRuleLattice lattice = detail::fixed_rule_lattice(*q, p.band);
            if (detail::fixed_rule_suits(lattice)) {
                if (!curve || !(curve->lattice() == lattice))
                    curve = std::make_shared<detail::FixedRuleCurve>(q, lattice);
                return curve->means(*planck, p.band, radius_um, settings.spectral.breakpoints_um)
                    .q_abs;
            }
        }
        if (!nodes) {
            auto cache = std::make_shared<EdgeFitCache>();
            const GrainOptics o = node_optics;
            const double x_large = settings.large_sphere_from_x;
            const double s_um = radius_um;
            nodes = std::make_shared<detail::PlanckNodeRule>(
                node_optics, radius_um,
                [cache, o, x_large, s_um](double wavelength_um) {
                    return cache->efficiencies(o, s_um, wavelength_um, x_large).q_abs;
                },
                density, settings.spectral.relative_tolerance, settings.spectral.breakpoints_um);
        }
        return nodes->mean(*planck, p.band);
    };
}

} // namespace holdfast
