// A fixed quadrature rule for spectrum-averaged efficiencies <Q_pr>(s), <Q_abs>(s), fast for
// nearly transparent and coated grains as well as for absorbing ones.
//
// References
//   van de Hulst, H. C. 1957, Light Scattering by Small Particles (Wiley; Dover 1981),
//     sec. 11.22-11.23: the interference structure of Q(x) for m close to 1 has the phase
//     rho = 2 x (n - 1), so its period in x is about pi / |n - 1|; ch. 12 and 17: geometric
//     optics as the large-sphere limit.
//   Chylek, P. 1976, J. Opt. Soc. Am. 66, 285: the resonances (ripple) of weakly absorbing
//     spheres are narrow spikes whose width shrinks with k and with x.
//   Gauss-Legendre rules: Abramowitz & Stegun 1964, 25.4.29 (nodes and weights from GSL's
//     gsl_integration_glfixed_table).
//
// Why not the adaptive quadrature (spectral_mean.cpp). For a weakly absorbing sphere
// (ice, k = 1e-4) Q(x) is a smooth interference structure plus thousands of narrow resonance
// spikes. An adaptive rule bisects onto every spike it notices and, for a 200-radius curve to
// 1 mm, took minutes (the shipped ice curve failed after 8 minutes on a roundoff test). Nor
// can the spikes simply be skipped: measured, their share of <Q_pr> is ~1e-3 at x ~ 30-300
// for k = 1e-4, because the ones that carry area are as wide as their absorption width
// 2 k x / n. A fixed rule fine enough to resolve those costs little if the work is shared
// between radii, which panels fixed in x allow.
//
// Method. With v = ln x, x = 2 pi s / lambda, the mean is
//   <Q>(s) = int Q(x) F(lambda) lambda dv / int F(lambda) lambda dv  over the band,
// both integrals by the same composite 8-point Gauss-Legendre rule. The coarse panels are
// [j h, (j + 1) h] in v (h = 0.0625 by default), the same for every radius; each is cut into
// equal fine panels (FixedRuleCurve::subdivisions):
//   - none for x < 2 (no resonances yet) and above the large-sphere limit (smooth models);
//   - between them, fine panels 12 k wide in v (k the smallest over the band and the
//     components; at least 0.00125 by default), which puts 8 nodes within ~2.5 absorption
//     widths of a resonance, and no longer than half an interference period pi / nu in x
//     (nu = max(|n - 1|, 0.1)) while k x < 3 (beyond, the interference is damped away).
// For an index that does not depend on wavelength Q depends on x alone: each coarse panel's Q
// is computed once per curve and turned into product-integration weights against the 8 coarse
// Gauss nodes (the spectrum, smooth on the panel, is interpolated through them), so a further
// radius costs 8 values of the spectrum per coarse panel; only the two panels cut by the
// band's ends are integrated fine panel by fine panel. Indices that vary with wavelength use
// the adaptive quadrature instead (grain_optics.cpp): Q would change at every radius.
//
// Large spheres (x above large_sphere_from_x, default 1000, rounded up to a coarse edge). A
// homogeneous sphere uses geometric optics (mie_geometric_optics) plus R(x)/x. Up to k x = 1
// (at most x = 2e4), R is the Hann-window average of x (series - geometric optics) at three
// sizes per decade, interpolated (cubic in ln x): for small k a single value of the series
// carries the interference and the resonances, and the residual's mean changes with k x (from
// about 5.4/x to 8/x for ice), which the form a/x + b x^(-4/3) fitted at two sizes misses by
// 3e-4 in <Q_pr>. Beyond k x = 1 the resonances are damped and R = a + b x^(-1/3) is fitted
// to single values of the series at two sizes, which is grain_efficiencies' shortcut. A coated
// sphere has no geometric-optics model here: where its mantle absorbs everything that reaches
// the core (2 k_mantle x (1 - f) >= 12) it is the homogeneous sphere of the mantle material;
// otherwise its Q is the Hann-window average of its series over 4 interference periods at
// three sizes per decade, interpolated (cubic in ln x). Either way a curve no longer sums
// the series at every node up to the largest x.
//
// Accuracy (README "Spectral means", tests/grain_optics_test.cpp): against the adaptive quadrature
// at tolerance 1e-8 with the exact series at every size, or against this rule with panels a quarter
// as wide and the exact series at every size, <Q_pr> is within 4e-5 relative and <Q_abs> within
// 6e-5 for the shipped materials, porous ice-like and ice-coated grains.
#include "grain_spectral_rule.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <numbers>
#include <string>
#include <thread>

#include <gsl/gsl_integration.h>

#include "holdfast/errors.hpp"
#include "holdfast/mie.hpp"
#include "mie_series.hpp"
#include "text_table.hpp"

namespace holdfast::detail {
namespace {

using std::numbers::pi;

// Geometric optics no longer depends on x once k x reaches this (as in grain_optics.cpp).
constexpr double absorbed_kx = 100.0;
// Mantle optical depth (one way, normal incidence) beyond which the core is invisible.
constexpr double thick_mantle_depth = 12.0;
// Coated-sphere window averages: grid points per decade of x, window length in periods.
constexpr double coated_grid_per_decade = 3.0;
constexpr double coated_window_periods = 4.0;
// Beyond this k x the interference structure is damped below exp(-12).
constexpr double damped_kx = 3.0;
// The largest size parameter at which the large-sphere model averages the series.
constexpr double max_grid_x = 2e4;
// Resonances start above this size parameter (below it the coarse panels suffice).
constexpr double ripple_from_x = 2.0;
// Resonance panels are this many times k wide in ln x (see fixed_rule_lattice).
constexpr double ripple_per_k = 12.0;

struct GaussRule {
    std::array<double, 8> t{}, w{}; // on [-1, 1]
};

GaussRule make_gauss_rule() {
    gsl_integration_glfixed_table* table = gsl_integration_glfixed_table_alloc(8);
    if (table == nullptr) throw NumericalError("fixed spectral rule: cannot allocate GSL table");
    GaussRule r;
    for (std::size_t i = 0; i < 8; ++i) {
        if (gsl_integration_glfixed_point(-1.0, 1.0, i, &r.t[i], &r.w[i], table) != 0) {
            gsl_integration_glfixed_table_free(table);
            throw NumericalError("fixed spectral rule: GSL Gauss-Legendre node failed");
        }
    }
    gsl_integration_glfixed_table_free(table);
    return r;
}

const GaussRule& gauss8() {
    static const GaussRule rule = make_gauss_rule(); // read-only once built
    return rule;
}

double rate(std::complex<double> m) { return std::max(std::abs(m.real() - 1.0), 0.1); }

bool coated_grain(const GrainOptics& o) { return o.mantle && o.core_radius_fraction < 1.0; }

// Width in ln x of the panels that resolve resonances of an index with imaginary part k.
double ripple_width(double k, const FixedRuleDensity& d) {
    return std::clamp(ripple_per_k * k, d.ripple_ln_width, d.coarse_ln_width);
}

// Geometric optics with the x-independent value reused once k x >= absorbed_kx.
struct GeometricOptics {
    std::complex<double> m;
    std::optional<MieEfficiencies> absorbed;
    MieEfficiencies at(double x) {
        if (m.imag() * x >= absorbed_kx) {
            complete();
            return *absorbed;
        }
        return mie_geometric_optics(m, x);
    }
    // Computes what at() would keep, so that at() only reads from then on.
    void complete() {
        if (!absorbed && m.imag() > 0.0)
            absorbed = mie_geometric_optics(
                m, std::max(absorbed_kx / m.imag(), MieRange::x_min_geometric));
    }
};

// Calls f(x, weight) at the composite Gauss-Legendre nodes of [x0, x1] cut into panels of
// equal width no more than `step` in ln x; the weights are for int dv, v = ln x.
template <class F> void gauss_in_ln_x(double x0, double x1, double step, F&& f) {
    const GaussRule& rule = gauss8();
    const double v0 = std::log(x0), v1 = std::log(x1);
    const int panels = std::max(1, static_cast<int>(std::ceil((v1 - v0) / step)));
    const double h = (v1 - v0) / panels;
    for (int p = 0; p < panels; ++p) {
        const double a = v0 + h * p;
        const double b = p + 1 == panels ? v1 : a + h;
        for (std::size_t i = 0; i < 8; ++i)
            f(std::exp(0.5 * (a + b) + 0.5 * (b - a) * rule.t[i]), 0.5 * (b - a) * rule.w[i]);
    }
}

std::size_t mix(std::size_t seed, double v) {
    return seed ^ (std::hash<double>{}(v) + 0x9e3779b97f4a7c15ULL + (seed << 6) + (seed >> 2));
}

} // namespace

FixedRuleDensity fixed_rule_density(double relative_tolerance) {
    // Measured (README): at the default density (tolerance 1e-5) the rule's own error in
    // <Q_pr> stays below 3e-5 for the shipped materials. Each factor 10 tighter halves every
    // panel, each factor 10 looser doubles them, within 1e-7..1e-3.
    FixedRuleDensity d;
    const double steps = std::clamp(std::round(std::log10(1e-5 / relative_tolerance)), -2.0, 2.0);
    const double scale = std::pow(2.0, -steps);
    d.coarse_ln_width = 0.0625 * std::min(scale, 1.0);
    d.ripple_ln_width = 0.00125 * scale;
    d.periods_per_panel = 0.5 * scale;
    d.window_periods_per_panel = d.periods_per_panel;
    return d;
}

// ---- large homogeneous spheres -----------------------------------------------------------------

struct SmoothedGrainQ::EdgeFit {
    // Q = geometric optics + R(x) / x above X = large_x. Up to x_J >= 1/k, R is the Hann-window
    // average of x (series - geometric optics) at x_j = X 10^(j/3), interpolated (cubic in
    // ln x); beyond x_J, where k x >= 1 damps the resonances, R = a + b x^(-1/3) fitted to the
    // series at x_J and 2 x_J (single values, as grain_efficiencies does). With k >= 1/X that
    // is the whole model, and the same as grain_efficiencies'.
    std::complex<double> m;
    GeometricOptics go;
    double x_from = 1000.0;
    int last = 0;                        // J
    std::vector<std::optional<Value>> r; // R at x_j, computed when needed
    std::optional<Value> a, b;           // the fit beyond x_J (absent: R_J)
    FixedRuleDensity density;

    EdgeFit(std::complex<double> m_, double x_from_, const FixedRuleDensity& d)
        : m(m_), go{m_, std::nullopt}, x_from(x_from_), density(d) {
        // The grid reaches k x = 1, but not beyond x = 2e4 (its windows cost ~x each): a
        // sphere with k < 5e-5 continues from the last two grid values.
        const double x_c =
            std::max(x_from, m.imag() > 0.0 ? std::min(1.0 / m.imag(), max_grid_x) : max_grid_x);
        last = static_cast<int>(std::ceil(3.0 * std::log10(x_c / x_from) - 1e-9));
        r.resize(static_cast<std::size_t>(last) + 1);
        const double x1 = grid_x(last), x2 = 2.0 * x1;
        Value va, vb;
        auto fit = [&](double p1, double p2, double r1, double r2, double& fa, double& fb) {
            fb = (r1 - r2) / (p1 - p2);
            fa = r1 - fb * p1;
        };
        if (m.imag() * x1 >= 1.0 && x2 <= MieRange::x_max_series) {
            // R = a + b x^(-1/3) through the single values at x1 and x2.
            const MieEfficiencies s1 = mie_sphere(m, x1), s2 = mie_sphere(m, x2);
            const MieEfficiencies g1 = go.at(x1), g2 = go.at(x2);
            const double p1 = std::cbrt(1.0 / x1), p2 = std::cbrt(1.0 / x2);
            fit(p1, p2, x1 * (s1.q_pr - g1.q_pr), x2 * (s2.q_pr - g2.q_pr), va.q_pr, vb.q_pr);
            fit(p1, p2, x1 * (s1.q_abs - g1.q_abs), x2 * (s2.q_abs - g2.q_abs), va.q_abs, vb.q_abs);
            a = va;
            b = vb;
        } else if (last > 0) {
            // ... or through the window averages at the last two grid points, when first
            // needed (they are the costliest windows).
            fit_pending = true;
        }
    }

    bool fit_pending = false;
    void fit_to_grid() {
        fit_pending = false;
        const Value r1 = grid(last - 1), r2 = grid(last);
        const double p1 = std::cbrt(1.0 / grid_x(last - 1)), p2 = std::cbrt(1.0 / grid_x(last));
        Value va, vb;
        vb.q_pr = (r1.q_pr - r2.q_pr) / (p1 - p2);
        va.q_pr = r1.q_pr - vb.q_pr * p1;
        vb.q_abs = (r1.q_abs - r2.q_abs) / (p1 - p2);
        va.q_abs = r1.q_abs - vb.q_abs * p1;
        a = va;
        b = vb;
    }

    double grid_x(int j) const { return x_from * std::pow(10.0, j / 3.0); }
    // Window length in ln x: 8 interference periods, at least 0.02.
    double window_width(double x) const {
        return std::max(density.window_ln_floor, 8.0 * pi / (rate(m) * x));
    }

    const Value& grid(int j) {
        auto& slot = r[static_cast<std::size_t>(j)];
        if (slot) return *slot;
        const double xc = grid_x(j), half = 0.5 * window_width(xc);
        const double x0 = xc * std::exp(-half), x1 = xc * std::exp(half);
        auto hann = [&](double x) {
            return std::pow(std::cos(0.5 * pi * std::log(x / xc) / half), 2);
        };
        // The series on panels as fine as the rule's resonance panels (it has spikes) ...
        const double step = std::min(ripple_width(m.imag(), density),
                                     density.window_periods_per_panel * pi / (rate(m) * x1));
        double sw = 0.0, pr = 0.0, ab = 0.0;
        gauss_in_ln_x(x0, x1, step, [&](double x, double w) {
            const MieEfficiencies e = mie_sphere(m, x);
            const double wt = w * hann(x) * x;
            sw += w * hann(x);
            pr += wt * e.q_pr;
            ab += wt * e.q_abs;
        });
        // ... geometric optics on 16 panels (it is smooth).
        gauss_in_ln_x(x0, x1, half / 8.0, [&](double x, double w) {
            const MieEfficiencies g = go.at(x);
            const double wt = w * hann(x) * x;
            pr -= wt * g.q_pr;
            ab -= wt * g.q_abs;
        });
        slot = Value{pr / sw, ab / sw};
        return *slot;
    }

    // Everything at(x) may fill in for x > x_from (the window averages it interpolates, the
    // fit beyond them, geometric optics' kept value), so that it then only reads. With a single
    // window point and the fit from single values (k x_from >= 1), at() needs no window above
    // x_from: skipping it saves the costliest average.
    void complete() {
        if (!(last == 0 && a))
            for (int j = 0; j <= last; ++j)
                grid(j);
        if (fit_pending) fit_to_grid();
        go.complete();
    }

    Value at(double x) {
        const MieEfficiencies g = go.at(x);
        Value rx;
        if (x > grid_x(last) && fit_pending) fit_to_grid();
        if (x > grid_x(last) && a) {
            const double p = std::cbrt(1.0 / x);
            rx = {a->q_pr + b->q_pr * p, a->q_abs + b->q_abs * p};
        } else if (x >= grid_x(last)) {
            rx = grid(last);
        } else {
            // Lagrange interpolation in t = 3 log10(x / X) through up to 4 grid points.
            const double t = 3.0 * std::log10(x / x_from);
            const int width = std::min(last, 3);
            const int j0 = std::clamp(static_cast<int>(std::floor(t)) - 1, 0, last - width);
            for (int i = 0; i <= width; ++i) {
                double l = 1.0;
                for (int k = 0; k <= width; ++k)
                    if (k != i) l *= (t - (j0 + k)) / static_cast<double>(i - k);
                const Value& v = grid(j0 + i);
                rx.q_pr += l * v.q_pr;
                rx.q_abs += l * v.q_abs;
            }
        }
        return {g.q_pr + rx.q_pr / x, g.q_abs + rx.q_abs / x};
    }
};

// ---- large coated spheres ------------------------------------------------------------------

struct SmoothedGrainQ::CoatedGrid {
    std::complex<double> m_core, m_mantle;
    double fraction = 1.0, x_from = 1000.0, nu = 0.1;
    std::map<int, Value> averages;

    double grid_x(int j) const { return x_from * std::pow(10.0, j / coated_grid_per_decade); }
    double half_window(double x) const {
        return std::min(0.5 * coated_window_periods * pi / nu, 0.25 * x);
    }
    bool computable(int j) const {
        const double x = grid_x(j);
        return x + half_window(x) <= MieRange::x_max_series;
    }
    const Value& average(int j) {
        auto it = averages.find(j);
        if (it != averages.end()) return it->second;
        const double xc = grid_x(j), h = half_window(xc);
        double sw = 0.0, pr = 0.0, ab = 0.0;
        // One interference period per panel, Hann weight in x.
        gauss_in_ln_x(xc - h, xc + h, pi / (nu * (xc + h)), [&](double x, double w) {
            const double hann = std::pow(std::cos(0.5 * pi * (x - xc) / h), 2);
            const MieEfficiencies e = mie_coated_sphere(m_core, m_mantle, fraction * x, x);
            sw += w * x * hann;
            pr += w * x * hann * e.q_pr;
            ab += w * x * hann * e.q_abs;
        });
        return averages.emplace(j, Value{pr / sw, ab / sw}).first->second;
    }
    Value at(double x) {
        check_size_parameter(x, MieRange::x_max_series, "mie_coated_sphere (outer)");
        const double t = coated_grid_per_decade * std::log10(x / x_from);
        int j0 = static_cast<int>(std::floor(t)) - 1; // stencil j0 .. j0 + 3
        while (j0 > -1 && !computable(j0 + 3))
            --j0;
        if (!computable(j0 + 3))
            throw InputError("coated grain: size parameter " + num(x) +
                             " is too large for the coated-sphere series");
        // Four-point Lagrange interpolation in t (equally spaced in ln x).
        Value v;
        for (int i = 0; i < 4; ++i) {
            double l = 1.0;
            for (int k = 0; k < 4; ++k)
                if (k != i) l *= (t - (j0 + k)) / static_cast<double>(i - k);
            const Value& a = average(j0 + i);
            v.q_pr += l * a.q_pr;
            v.q_abs += l * a.q_abs;
        }
        return v;
    }
};

// ---- SmoothedGrainQ ---------------------------------------------------------------------------

std::size_t SmoothedGrainQ::IndexKeyHash::operator()(const IndexKey& k) const noexcept {
    std::size_t h = std::hash<double>{}(k.core_re);
    h = mix(h, k.core_im);
    h = mix(h, k.mantle_re);
    return mix(h, k.mantle_im);
}

SmoothedGrainQ::SmoothedGrainQ(GrainOptics optics, double large_x, FixedRuleDensity density)
    : optics_(std::move(optics)), large_x_(large_x), density_(density) {
    check_grain_optics(optics_);
    if (large_x_ > 0.0) {
        // On a coarse-panel edge (the models switch there), at least 100 (geometric optics'
        // range), and the fits need the series up to twice it.
        const double h = density_.coarse_ln_width;
        large_x_ =
            std::exp(h * std::ceil(std::log(std::max(large_x_, MieRange::x_min_geometric)) / h));
        if (2.2 * large_x_ > MieRange::x_max_series) large_x_ = 0.0;
    }
}

SmoothedGrainQ::Value SmoothedGrainQ::at(double wavelength_um, double x) {
    const std::complex<double> m_core = optics_.core->index_at_um(wavelength_um);
    if (coated_grain(optics_)) return coated(m_core, optics_.mantle->index_at_um(wavelength_um), x);
    return homogeneous(m_core, x);
}

SmoothedGrainQ::Value SmoothedGrainQ::model_at(double wavelength_um, double x) {
    if (!(large_x_ > 0.0)) throw InternalError("SmoothedGrainQ::model_at: no large-sphere model");
    const std::complex<double> m_core = optics_.core->index_at_um(wavelength_um);
    if (coated_grain(optics_))
        return coated(m_core, optics_.mantle->index_at_um(wavelength_um), x, true);
    return homogeneous(m_core, x, true);
}

SmoothedGrainQ::Value SmoothedGrainQ::geometric_at(double wavelength_um, double x) const {
    std::complex<double> m = optics_.core->index_at_um(wavelength_um);
    if (coated_grain(optics_)) {
        const std::complex<double> m_mantle = optics_.mantle->index_at_um(wavelength_um);
        if (!(2.0 * m_mantle.imag() * x * (1.0 - optics_.core_radius_fraction) >=
              thick_mantle_depth))
            return {};
        m = m_mantle;
    }
    GeometricOptics go{m, std::nullopt};
    const MieEfficiencies g = go.at(x);
    return {g.q_pr, g.q_abs};
}

bool SmoothedGrainQ::prepare_shared_model(double wavelength_um) {
    if (!(large_x_ > 0.0) || coated_grain(optics_)) return false;
    const std::complex<double> m = optics_.core->index_at_um(wavelength_um);
    const IndexKey key{m.real(), m.imag(), 0.0, 0.0};
    if (!fits_.count(key)) fits_.emplace(key, std::make_shared<EdgeFit>(m, large_x_, density_));
    return true;
}

void SmoothedGrainQ::share_models_with(SmoothedGrainQ& other) {
    for (const auto& [key, fit] : fits_)
        other.fits_[key] = fit;
}

void SmoothedGrainQ::complete_models() {
    for (auto& entry : fits_)
        entry.second->complete();
}

SmoothedGrainQ::Value SmoothedGrainQ::homogeneous(std::complex<double> m, double x, bool model) {
    if (large_x_ > 0.0 && (model || x > large_x_)) {
        const IndexKey key{m.real(), m.imag(), 0.0, 0.0};
        auto it = fits_.find(key);
        if (it == fits_.end()) {
            if (fits_.size() > 10000) fits_.clear();
            it = fits_.emplace(key, std::make_shared<EdgeFit>(m, large_x_, density_)).first;
        }
        return it->second->at(x);
    }
    const MieEfficiencies e = mie_sphere_any_size(m, x);
    return {e.q_pr, e.q_abs};
}

SmoothedGrainQ::Value SmoothedGrainQ::coated(std::complex<double> m_core,
                                             std::complex<double> m_mantle, double x, bool model) {
    const double f = optics_.core_radius_fraction;
    if (large_x_ > 0.0 && (model || x > large_x_)) {
        // A thick absorbing mantle hides the core: the homogeneous mantle sphere.
        if (2.0 * m_mantle.imag() * x * (1.0 - f) >= thick_mantle_depth)
            return homogeneous(m_mantle, x, model);
        const IndexKey key{m_core.real(), m_core.imag(), m_mantle.real(), m_mantle.imag()};
        auto it = grids_.find(key);
        if (it == grids_.end()) {
            if (grids_.size() > 10000) grids_.clear();
            auto grid = std::make_shared<CoatedGrid>();
            grid->m_core = m_core;
            grid->m_mantle = m_mantle;
            grid->fraction = f;
            grid->x_from = large_x_;
            grid->nu = std::max(rate(m_core), rate(m_mantle));
            it = grids_.emplace(key, std::move(grid)).first;
        }
        return it->second->at(x);
    }
    const MieEfficiencies e = mie_coated_sphere_any_size(m_core, m_mantle, f * x, x);
    return {e.q_pr, e.q_abs};
}

// ---- the lattice ------------------------------------------------------------------------------

FixedRuleLattice fixed_rule_lattice(const SmoothedGrainQ& q, const WavelengthBand& band) {
    // nu and k sampled at 65 wavelengths across the band and at the rows of tabulated optical
    // constants (between rows they are interpolated, so their extremes are at rows).
    const GrainOptics& o = q.optics();
    const bool coated = coated_grain(o);
    const double u0 = std::log(band.low_um), u1 = std::log(band.high_um);
    std::vector<double> wavelengths;
    constexpr int samples = 64;
    for (int i = 0; i <= samples; ++i)
        wavelengths.push_back(std::exp(u0 + (u1 - u0) * i / samples));
    bool kinks = false;
    auto add_rows = [&](const std::shared_ptr<const OpticalConstants>& c) {
        for (double wl : c->breakpoints_um()) {
            kinks = true;
            if (wl > band.low_um && wl < band.high_um) wavelengths.push_back(wl);
        }
    };
    add_rows(o.core);
    if (coated) add_rows(o.mantle);
    FixedRuleLattice l;
    l.density = q.density();
    l.reference_wavelength_um = std::sqrt(band.low_um * band.high_um);
    const std::complex<double> core0 = o.core->index_at_um(l.reference_wavelength_um);
    const std::complex<double> mantle0 =
        coated ? o.mantle->index_at_um(l.reference_wavelength_um) : std::complex<double>();
    double k_min = std::numeric_limits<double>::infinity();
    l.constant_index = !kinks;
    for (double wl : wavelengths) {
        const std::complex<double> mc = o.core->index_at_um(wl);
        l.nu = std::max(l.nu, rate(mc));
        k_min = std::min(k_min, mc.imag());
        if (mc != core0) l.constant_index = false;
        if (coated) {
            const std::complex<double> mm = o.mantle->index_at_um(wl);
            l.nu = std::max(l.nu, rate(mm));
            k_min = std::min(k_min, mm.imag());
            if (mm != mantle0) l.constant_index = false;
        }
    }
    // A resonance's width in x is at least about 2 k x / n (absorption-limited, Chylek 1976);
    // panels of 12 k in ln x put 8 nodes within about 2.5 such widths, so the spikes that carry
    // area are resolved; narrower ones (below the floor) carry area in proportion to their width.
    l.ripple_ln_width = ripple_width(k_min, l.density);
    l.smallest_k = k_min;
    return l;
}

bool fixed_rule_suits(const FixedRuleLattice& lattice) { return lattice.constant_index; }

// ---- the rule ---------------------------------------------------------------------------------

FixedRuleCurve::FixedRuleCurve(std::shared_ptr<SmoothedGrainQ> q, FixedRuleLattice lattice)
    : q_(std::move(q)), lattice_(lattice) {
    const double h = lattice_.density.coarse_ln_width;
    j_ripple_ = static_cast<long>(std::ceil(std::log(ripple_from_x) / h));
    j_top_ = q_->large_x() > 0.0 ? std::lround(std::log(q_->large_x()) / h)
                                 : std::numeric_limits<long>::max();
}

int FixedRuleCurve::subdivisions(long j) const {
    if (j < j_ripple_ || j >= j_top_) return 1;
    const double h = lattice_.density.coarse_ln_width;
    const double x_lo = std::exp(h * static_cast<double>(j));
    const double x_hi = std::exp(h * static_cast<double>(j + 1));
    // The interference structure needs resolving only while the light crossing the sphere is
    // not yet absorbed: its amplitude falls as exp(-4 k x) (van de Hulst 1957, sec. 11.22).
    const double fine =
        lattice_.smallest_k * x_lo >= damped_kx
            ? lattice_.ripple_ln_width
            : std::min(lattice_.ripple_ln_width,
                       lattice_.density.periods_per_panel * pi / (lattice_.nu * x_hi));
    return std::max(1, static_cast<int>(std::ceil(h / fine - 1e-9)));
}

namespace {
// Edges of fine panel k of n in coarse panel j (the same doubles wherever they are needed).
double fine_edge(long j, int k, int n, double h) {
    const double a = h * static_cast<double>(j);
    return k == n ? h * static_cast<double>(j + 1) : a + h * k / n;
}

// The two rules' common ending: the flux-weighted sums divided by the flux, refused when the
// band holds no flux or the result is not finite.
FixedRuleMeans finished_means(double num_pr, double num_abs, double den,
                              const std::string& spectrum_name, const WavelengthBand& band,
                              double radius_um) {
    if (!(den > 0.0))
        throw NumericalError("spectral mean: " + spectrum_name + " has no flux between " +
                             num(band.low_um) + " and " + num(band.high_um) + " um");
    const FixedRuleMeans out{num_pr / den, num_abs / den};
    if (!std::isfinite(out.q_pr) || !std::isfinite(out.q_abs))
        throw NumericalError("spectral mean of Q at radius " + num(radius_um) +
                             " um is not a finite number");
    return out;
}
} // namespace

const FixedRuleCurve::Coarse& FixedRuleCurve::coarse(long j) {
    if (auto it = cache_.find(j); it != cache_.end()) return it->second;
    if (cache_.size() > 20000) cache_.clear();
    return cache_.emplace(j, compute_coarse(j)).first->second;
}

std::pair<long, long> FixedRuleCurve::panel_range(const WavelengthBand& band,
                                                  double radius_um) const {
    const double h = lattice_.density.coarse_ln_width;
    const double two_pi_s = 2.0 * pi * radius_um;
    const double v_lo = std::log(two_pi_s / band.high_um), v_hi = std::log(two_pi_s / band.low_um);
    return {static_cast<long>(std::floor(v_lo / h)), static_cast<long>(std::ceil(v_hi / h)) - 1};
}

FixedRuleCurve::MissingPanels
FixedRuleCurve::missing_panels(const WavelengthBand& band, std::span<const double> radii_um) const {
    MissingPanels out;
    if (!lattice_.constant_index) return out;
    std::vector<long> all;
    for (double s : radii_um) {
        if (!(s > 0.0) || !std::isfinite(s)) continue; // means() refuses it with a message
        const auto [first, last] = panel_range(band, s);
        for (long j = first; j <= last; ++j)
            if (!cache_.count(j)) all.push_back(j);
    }
    std::sort(all.begin(), all.end());
    all.erase(std::unique(all.begin(), all.end()), all.end());
    for (long j : all)
        (j >= j_top_ ? out.model : out.series).push_back(j);
    return out;
}

void FixedRuleCurve::compute_panels(const MissingPanels& panels, PanelCounters& next,
                                    const std::atomic<bool>& model_ready,
                                    const std::atomic<bool>* stop) {
    auto take = [this](const std::vector<long>& list, std::atomic<std::size_t>& counter) {
        const std::size_t i = counter++;
        if (i >= list.size()) return false;
        const long j = list[list.size() - 1 - i];
        if (!cache_.count(j)) cache_.emplace(j, compute_coarse(j));
        return true;
    };
    for (;;) {
        if (stop != nullptr && stop->load(std::memory_order_relaxed)) return;
        if (model_ready.load(std::memory_order_acquire) && take(panels.model, next.model)) continue;
        if (take(panels.series, next.series)) continue;
        if (next.model.load() >= panels.model.size()) return;
        std::this_thread::yield(); // the series panels are done; the model is being built
    }
}

void FixedRuleCurve::adopt_panels(const FixedRuleCurve& other) {
    for (const auto& [j, c] : other.cache_)
        cache_.emplace(j, c);
}

FixedRuleCurve::Coarse FixedRuleCurve::compute_coarse(long j) {
    const GaussRule& rule = gauss8();
    const double h = lattice_.density.coarse_ln_width;
    Coarse c;
    c.subdivisions = subdivisions(j);
    const double mid_c = h * (static_cast<double>(j) + 0.5), half_c = 0.5 * h;
    for (int k = 0; k < c.subdivisions; ++k) {
        const double a = fine_edge(j, k, c.subdivisions, h);
        const double b = fine_edge(j, k + 1, c.subdivisions, h);
        for (std::size_t i = 0; i < points; ++i) {
            const double v = 0.5 * (a + b) + 0.5 * (b - a) * rule.t[i];
            const SmoothedGrainQ::Value q = q_->at(lattice_.reference_wavelength_um, std::exp(v));
            c.q_pr.push_back(q.q_pr);
            c.q_abs.push_back(q.q_abs);
            // Product integration: int Q W dv over the coarse panel with W replaced by its
            // interpolating polynomial through the coarse Gauss nodes, sum_m W(v_m) l_m(v).
            const double t = (v - mid_c) / half_c, w = 0.5 * (b - a) * rule.w[i];
            for (std::size_t m = 0; m < points; ++m) {
                double l = 1.0;
                for (std::size_t n = 0; n < points; ++n)
                    if (n != m) l *= (t - rule.t[n]) / (rule.t[m] - rule.t[n]);
                c.w_pr[m] += w * q.q_pr * l;
                c.w_abs[m] += w * q.q_abs * l;
            }
        }
    }
    return c;
}

FixedRuleMeans FixedRuleCurve::means(const Spectrum& spectrum, const WavelengthBand& band,
                                     double radius_um, const std::vector<double>& extra_kinks_um) {
    if (!(radius_um > 0.0) || !std::isfinite(radius_um))
        throw InputError("the grain radius must be positive, got " + num(radius_um) + " um");
    const GaussRule& rule = gauss8();
    const double h = lattice_.density.coarse_ln_width;
    const double two_pi_s = 2.0 * pi * radius_um;
    const double v_lo = std::log(two_pi_s / band.high_um), v_hi = std::log(two_pi_s / band.low_um);
    // Kinks of tabulated optical constants, at radius-dependent v.
    std::vector<double> kinks;
    auto add_kink = [&](double wavelength_um) {
        const double v = std::log(two_pi_s / wavelength_um);
        if (v > v_lo && v < v_hi) kinks.push_back(v);
    };
    for (double wl : extra_kinks_um)
        add_kink(wl);
    for (double wl : q_->optics().core->breakpoints_um())
        add_kink(wl);
    if (coated_grain(q_->optics()))
        for (double wl : q_->optics().mantle->breakpoints_um())
            add_kink(wl);
    std::sort(kinks.begin(), kinks.end());
    auto next_kink = kinks.begin();

    double den = 0.0, num_pr = 0.0, num_abs = 0.0;
    auto flux = [&](double v) {
        const double wavelength_um = two_pi_s / std::exp(v);
        return spectrum.f_lambda_shape(wavelength_um) * wavelength_um;
    };
    // Gauss-Legendre on [a, b] with Q computed here.
    auto fresh = [&](double a, double b) {
        for (std::size_t i = 0; i < points; ++i) {
            const double v = 0.5 * (a + b) + 0.5 * (b - a) * rule.t[i];
            const double x = std::exp(v), wavelength_um = two_pi_s / x;
            const double f = spectrum.f_lambda_shape(wavelength_um) * wavelength_um;
            if (f == 0.0) continue; // no flux, no weight (Q may be undefined there)
            const double w = 0.5 * (b - a) * rule.w[i] * f;
            const SmoothedGrainQ::Value q = q_->at(wavelength_um, x);
            den += w;
            num_pr += w * q.q_pr;
            num_abs += w * q.q_abs;
        }
    };
    const auto [j_first, j_last] = panel_range(band, radius_um);
    for (long j = j_first; j <= j_last; ++j) {
        const double a = h * static_cast<double>(j), b = h * static_cast<double>(j + 1);
        while (next_kink != kinks.end() && *next_kink <= a)
            ++next_kink;
        const bool kinked = next_kink != kinks.end() && *next_kink < b;
        if (lattice_.constant_index && a >= v_lo && b <= v_hi && !kinked) {
            const Coarse& c = coarse(j);
            for (std::size_t m = 0; m < points; ++m) {
                const double f = flux(0.5 * (a + b) + 0.5 * (b - a) * rule.t[m]);
                den += 0.5 * (b - a) * rule.w[m] * f;
                num_pr += c.w_pr[m] * f;
                num_abs += c.w_abs[m] * f;
            }
            continue;
        }
        // A panel cut by the band's ends or by kinks, or an index that varies: fine panels.
        const int n = lattice_.constant_index ? coarse(j).subdivisions : subdivisions(j);
        for (int k = 0; k < n; ++k) {
            const double fa = fine_edge(j, k, n, h), fb = fine_edge(j, k + 1, n, h);
            const double ca = std::max(fa, v_lo), cb = std::min(fb, v_hi);
            if (!(cb > ca)) continue;
            std::vector<double> cuts{ca};
            for (auto it = next_kink; it != kinks.end() && *it < cb; ++it)
                if (*it > ca) cuts.push_back(*it);
            cuts.push_back(cb);
            if (lattice_.constant_index && cuts.size() == 2 && ca == fa && cb == fb) {
                const Coarse& c = coarse(j);
                for (std::size_t i = 0; i < points; ++i) {
                    const double f = flux(0.5 * (fa + fb) + 0.5 * (fb - fa) * rule.t[i]);
                    const double w = 0.5 * (fb - fa) * rule.w[i] * f;
                    const std::size_t at = static_cast<std::size_t>(k) * points + i;
                    den += w;
                    num_pr += w * c.q_pr[at];
                    num_abs += w * c.q_abs[at];
                }
                continue;
            }
            for (std::size_t p = 0; p + 1 < cuts.size(); ++p)
                if (cuts[p + 1] > cuts[p]) fresh(cuts[p], cuts[p + 1]);
        }
    }
    return finished_means(num_pr, num_abs, den, "'" + spectrum.describe() + "'", band, radius_um);
}

// ---- indices that vary with wavelength ----------------------------------------------------------
//
// Tabulated optical constants change Q at every wavelength, so nothing computed for one radius
// serves another except the large-sphere models. The rule therefore works in u = ln(lambda):
//   <Q>(s) = int Q(m(lambda), x) F lambda du / int F lambda du,  x = 2 pi s / lambda.
// The band is cut into segments at the table's rows (between rows n and k are interpolated
// smoothly in ln lambda, so each segment is smooth in m) and at the coarse panel edges j h.
// A segment's nu and smallest k are those of its ends (n linear, k log-linear between rows:
// monotone). For one radius each segment is cut where x = 2 and x = large_x, and each piece
// gets Gauss-Legendre panels as wide as the constant-index rule would give at its largest x:
//   x <= 2            coarse (h), no resonances;
//   2 < x <= large_x  min(12 k, half an interference period pi / (nu x)) in ln x, floored as
//                     in fixed_rule_lattice, the period dropped where k x >= 3 (damped);
//   x > large_x       coarse: the smooth large-sphere model.
// A piece narrower than its panel width (dense tables: Franta's silica has ~430 rows per unit
// of ln lambda) gets a rule with proportionally fewer points, at least 2, so the node density
// stays ~8 per panel width and the cost does not grow with the table's rows.
// Large spheres: building the model (EdgeFit, window averages of the series up to x = 2e4)
// costs ~0.1-0.3 s per index for a nearly transparent one, far too much for every node. It
// is built only at lattice wavelengths u_j = j H (H = 2 h, clamped to the band), tabulated on
// the grid x_i = exp(i h), and evaluated as 4-point Lagrange interpolation in ln x (the
// model is smooth in x) and linear interpolation in u between the two lattice wavelengths
// (the model depends smoothly on m; a table's features are narrower than H only where k
// changes fast, and there the model varies little since k x >> 1 already absorbs the
// internal rays). The lattice values are shared by every radius, so a curve builds
// each lattice index's model once.
// Accuracy: against the same rule at tolerance 1e-7 (every panel and lattice step a quarter
// as wide), <Q_pr> agrees within 1e-4 relative (tests/grain_optics_test.cpp, a synthetic
// ice-like table with k from 1e-8 to 1e-4 and, with the shared data, Franta's fused silica).

namespace {

// Gauss-Legendre rules of 2 to 8 points on [-1, 1].
struct GaussRules {
    std::array<GaussRule, 9> by_points{};
    std::array<int, 9> size{};
};

GaussRules make_gauss_rules() {
    GaussRules rules;
    for (std::size_t n = 2; n <= 8; ++n) {
        gsl_integration_glfixed_table* table = gsl_integration_glfixed_table_alloc(n);
        if (table == nullptr) throw NumericalError("wavelength rule: cannot allocate GSL table");
        for (std::size_t i = 0; i < n; ++i) {
            if (gsl_integration_glfixed_point(-1.0, 1.0, i, &rules.by_points[n].t[i],
                                              &rules.by_points[n].w[i], table) != 0) {
                gsl_integration_glfixed_table_free(table);
                throw NumericalError("wavelength rule: GSL Gauss-Legendre node failed");
            }
        }
        gsl_integration_glfixed_table_free(table);
        rules.size[n] = static_cast<int>(n);
    }
    return rules;
}

const GaussRules& gauss_rules() {
    static const GaussRules rules = make_gauss_rules(); // read-only once built
    return rules;
}

} // namespace

WavelengthRuleCurve::WavelengthRuleCurve(std::shared_ptr<SmoothedGrainQ> q, WavelengthBand band,
                                         const std::vector<double>& extra_kinks_um)
    : q_(std::move(q)), band_(band) {
    if (!q_) throw InternalError("WavelengthRuleCurve: no grain");
    if (!(band_.low_um > 0.0 && std::isfinite(band_.high_um) && band_.high_um > band_.low_um))
        throw InputError("spectral mean: band " + num(band_.low_um) + " - " + num(band_.high_um) +
                         " um is not a finite range 0 < low < high");
    const double h = q_->density().coarse_ln_width;
    geometric_step_ = h;
    rest_step_ = 4.0 * h;
    const double u_lo = std::log(band_.low_um), u_hi = std::log(band_.high_um);
    std::vector<double> cuts{u_lo, u_hi};
    auto add = [&](double wavelength_um) {
        if (wavelength_um > band_.low_um && wavelength_um < band_.high_um)
            cuts.push_back(std::log(wavelength_um));
    };
    const GrainOptics& o = q_->optics();
    const bool coated = coated_grain(o);
    for (double wl : o.core->breakpoints_um())
        add(wl);
    if (coated)
        for (double wl : o.mantle->breakpoints_um())
            add(wl);
    for (double wl : extra_kinks_um)
        add(wl);
    for (long j = static_cast<long>(std::ceil(u_lo / h)); h * static_cast<double>(j) < u_hi; ++j)
        if (h * static_cast<double>(j) > u_lo) cuts.push_back(h * static_cast<double>(j));
    std::sort(cuts.begin(), cuts.end());
    // Ends at the band's edges exactly; no segments narrower than 1e-12 in ln(lambda).
    std::vector<double> kept{u_lo};
    for (double c : cuts)
        if (c - kept.back() > 1e-12 && u_hi - c > 1e-12) kept.push_back(c);
    kept.push_back(u_hi);
    std::complex<double> core_prev = o.core->index_at_um(band_.low_um);
    std::complex<double> mantle_prev =
        coated ? o.mantle->index_at_um(band_.low_um) : std::complex<double>();
    for (std::size_t i = 0; i + 1 < kept.size(); ++i) {
        // The ends' exact wavelengths (exp(log(w)) may fall a rounding error outside a table).
        const double wl = i + 2 == kept.size() ? band_.high_um : std::exp(kept[i + 1]);
        const std::complex<double> core = o.core->index_at_um(wl);
        Segment seg{kept[i], kept[i + 1], std::max(rate(core_prev), rate(core)),
                    std::min(core_prev.imag(), core.imag())};
        if (coated) {
            const std::complex<double> mantle = o.mantle->index_at_um(wl);
            seg.nu = std::max({seg.nu, rate(mantle_prev), rate(mantle)});
            seg.k_min = std::min({seg.k_min, mantle_prev.imag(), mantle.imag()});
            mantle_prev = mantle;
        }
        core_prev = core;
        segments_.push_back(seg);
    }
}

const SmoothedGrainQ::Value& WavelengthRuleCurve::lattice_value(bool geometric, long j, long i) {
    Column& column = (geometric ? geometric_ : rest_)[j];
    if (auto it = column.find(i); it != column.end()) return it->second;
    const double step = geometric ? geometric_step_ : rest_step_;
    const double u_lo = std::log(band_.low_um), u_hi = std::log(band_.high_um);
    const double u = std::clamp(step * static_cast<double>(j), u_lo, u_hi);
    // The band's own ends where the lattice is clamped (a table may end there).
    const double wavelength_um = u == u_lo ? band_.low_um : u == u_hi ? band_.high_um : std::exp(u);
    const double x = std::exp(q_->density().coarse_ln_width * static_cast<double>(i));
    ++evaluations_;
    SmoothedGrainQ::Value v = q_->geometric_at(wavelength_um, x);
    if (!geometric) {
        const SmoothedGrainQ::Value m = q_->model_at(wavelength_um, x);
        v = {m.q_pr - v.q_pr, m.q_abs - v.q_abs};
    }
    return column.emplace(i, v).first->second;
}

SmoothedGrainQ::Value WavelengthRuleCurve::model(double u, double x) {
    const double u_lo = std::log(band_.low_um), u_hi = std::log(band_.high_um);
    // 4-point Lagrange in ln x on the grid i h, never below the model's start ...
    const double hx = q_->density().coarse_ln_width;
    const double t = std::log(x) / hx;
    const long i_start = std::lround(std::log(q_->large_x()) / hx);
    const long i0 = std::max(static_cast<long>(std::floor(t)) - 1, i_start);
    std::array<double, 4> l{};
    for (long a = 0; a < 4; ++a) {
        l[static_cast<std::size_t>(a)] = 1.0;
        for (long b = 0; b < 4; ++b)
            if (b != a)
                l[static_cast<std::size_t>(a)] *=
                    (t - static_cast<double>(i0 + b)) / static_cast<double>(a - b);
    }
    // ... and linear in ln(lambda) between two lattice wavelengths, for each part.
    SmoothedGrainQ::Value v;
    for (bool geometric : {true, false}) {
        const double step = geometric ? geometric_step_ : rest_step_;
        const long j = static_cast<long>(std::floor(u / step));
        const double ua = std::clamp(step * static_cast<double>(j), u_lo, u_hi);
        const double ub = std::clamp(step * static_cast<double>(j + 1), u_lo, u_hi);
        const double tu = ub > ua ? std::clamp((u - ua) / (ub - ua), 0.0, 1.0) : 0.0;
        for (long a = 0; a < 4; ++a) {
            const SmoothedGrainQ::Value& va = lattice_value(geometric, j, i0 + a);
            const SmoothedGrainQ::Value& vb = lattice_value(geometric, j + 1, i0 + a);
            const double la = l[static_cast<std::size_t>(a)];
            v.q_pr += la * ((1.0 - tu) * va.q_pr + tu * vb.q_pr);
            v.q_abs += la * ((1.0 - tu) * va.q_abs + tu * vb.q_abs);
        }
    }
    return v;
}

FixedRuleMeans WavelengthRuleCurve::means(const Spectrum& spectrum, double radius_um) {
    if (!(radius_um > 0.0) || !std::isfinite(radius_um))
        throw InputError("the grain radius must be positive, got " + num(radius_um) + " um");
    const GaussRules& rules = gauss_rules();
    const FixedRuleDensity& d = q_->density();
    const double c = std::log(2.0 * pi * radius_um); // ln x = c - u
    const double large_x = q_->large_x();
    // u below u_large: x above the large-sphere limit; above u_ripple: x below 2.
    const double u_large =
        large_x > 0.0 ? c - std::log(large_x) : -std::numeric_limits<double>::infinity();
    const double u_ripple = c - std::log(ripple_from_x);
    double den = 0.0, num_pr = 0.0, num_abs = 0.0;
    for (const Segment& seg : segments_) {
        double cuts[4] = {seg.u0, seg.u0, seg.u0, seg.u1};
        int n_cuts = 1;
        for (double u : {u_large, u_ripple})
            if (u > seg.u0 && u < seg.u1 && u > cuts[n_cuts - 1]) cuts[n_cuts++] = u;
        cuts[n_cuts++] = seg.u1;
        for (int p = 0; p + 1 < n_cuts; ++p) {
            const double a = cuts[p], b = cuts[p + 1];
            const double mid = 0.5 * (a + b);
            const bool large = mid < u_large;
            const double x_hi = std::exp(c - a), x_lo = std::exp(c - b);
            double width = d.coarse_ln_width;
            if (!large && x_hi > ripple_from_x) {
                const double ripple = ripple_width(seg.k_min, d);
                width = seg.k_min * x_lo >= damped_kx
                            ? ripple
                            : std::min(ripple, d.periods_per_panel * pi / (seg.nu * x_hi));
            }
            const int panels = std::max(1, static_cast<int>(std::ceil((b - a) / width - 1e-9)));
            const int order =
                panels > 1 ? 8
                           : std::clamp(static_cast<int>(std::ceil(8.0 * (b - a) / width)), 2, 8);
            const GaussRule& rule = rules.by_points[static_cast<std::size_t>(order)];
            const double step = (b - a) / panels;
            for (int k = 0; k < panels; ++k) {
                const double pa = a + step * k, pb = k + 1 == panels ? b : pa + step;
                for (std::size_t i = 0; i < static_cast<std::size_t>(order); ++i) {
                    const double u = 0.5 * (pa + pb) + 0.5 * (pb - pa) * rule.t[i];
                    const double wavelength_um = std::exp(u);
                    const double f = spectrum.f_lambda_shape(wavelength_um) * wavelength_um;
                    if (f == 0.0) continue; // no flux, no weight
                    const double x = std::exp(c - u);
                    const SmoothedGrainQ::Value q = large ? model(u, x) : q_->at(wavelength_um, x);
                    if (!large) ++evaluations_;
                    const double w = 0.5 * (pb - pa) * rule.w[i] * f;
                    den += w;
                    num_pr += w * q.q_pr;
                    num_abs += w * q.q_abs;
                }
            }
        }
    }
    return finished_means(num_pr, num_abs, den, "the spectrum", band_, radius_um);
}

// ---- Planck means at many temperatures -----------------------------------------------------
//
// A temperature search evaluates <Q_abs>_T at ~5 temperatures per distance, each over its own
// Planck band. Q_abs(lambda) of the grain is the same at every temperature, so it is computed
// once on nodes fixed in u = ln(lambda) (PlanckNodeRule) and every mean is a weighted sum.
// The panels: cells [j h, (j + 1) h] of the coarse lattice, clipped to the optics' range and
// cut at kinks (table rows), each split into seed panels no wider than twice the wavelength
// rule's width for resonances and interference at the cell's largest x (see
// WavelengthRuleCurve::means). Each seed is then checked by bisection: its 8-point interpolant must
// reproduce Q_abs at the 16 nodes of its two halves to within tol * (its mean |Q_abs|), or each
// half is checked in turn (at most 24 levels deep); the halves that pass are kept, so the kept
// nodes are finer than what the test accepted. A cell wholly inside a band is summed as sum_k w_k
// F(u_k) over its own 8 Gauss nodes u_k, w_k = int Q_abs L_k du from the panels (product
// integration, as FixedRuleCurve does with the spectrum interpolated through the coarse nodes), so
// a mean costs 8 Planck values per cell however fine the panels. Error: the Planck weight is smooth
// on a cell (h = 0.03125 at tolerance 1e-6; across one at the band's short end, where hc / lambda
// kT ~ 30, e^{-hc/lambda kT} changes by a factor e^{~1}, so its degree-7 interpolant is good to
// ~1e-7 there and far better elsewhere), and Q_abs's interpolants are good to tol relative to
// <|Q_abs|> (an upper bound: the kept halves are more accurate than the panel that passed).
// tests/planck_mean_test.cpp measures the whole against the adaptive quadrature at 1e-10. Panels of
// a cell cut by a band's end use 8 fresh nodes on the part inside, with Q_abs from the panel's
// interpolant, so the band ends are exact (no snapping).

namespace {

// Barycentric weights of the 8 Gauss-Legendre nodes (Berrut & Trefethen 2004, SIAM Rev. 46,
// 501, eq. 3.2).
std::array<double, 8> make_barycentric_weights() {
    const GaussRule& g = gauss8();
    std::array<double, 8> w{};
    for (std::size_t i = 0; i < 8; ++i) {
        double p = 1.0;
        for (std::size_t k = 0; k < 8; ++k)
            if (k != i) p *= g.t[i] - g.t[k];
        w[i] = 1.0 / p;
    }
    return w;
}

const std::array<double, 8>& barycentric_weights() {
    static const std::array<double, 8> w = make_barycentric_weights(); // read-only once built
    return w;
}

// The degree-7 interpolant through values q at the Gauss nodes, at t in [-1, 1].
double interpolate(const std::array<double, 8>& q, double t) {
    const GaussRule& g = gauss8();
    const std::array<double, 8>& bw = barycentric_weights();
    double num = 0.0, den = 0.0;
    for (std::size_t i = 0; i < 8; ++i) {
        const double d = t - g.t[i];
        if (d == 0.0) return q[i];
        num += bw[i] * q[i] / d;
        den += bw[i] / d;
    }
    return num / den;
}

constexpr int planck_max_depth = 24;

} // namespace

PlanckNodeRule::PlanckNodeRule(const GrainOptics& optics, double radius_um,
                               std::function<double(double)> q_abs, FixedRuleDensity density,
                               double relative_tolerance, const std::vector<double>& kinks_um)
    : optics_(optics), radius_um_(radius_um), q_abs_(std::move(q_abs)), density_(density),
      tolerance_(relative_tolerance) {
    check_grain_optics(optics_);
    if (!q_abs_) throw InternalError("PlanckNodeRule: no Q_abs");
    if (!(radius_um > 0.0) || !std::isfinite(radius_um))
        throw InputError("the grain radius must be positive, got " + num(radius_um) + " um");
    double lo = optics_.core->min_wavelength_um(), hi = optics_.core->max_wavelength_um();
    std::vector<double> kinks = kinks_um;
    for (double wl : optics_.core->breakpoints_um())
        kinks.push_back(wl);
    if (coated_grain(optics_)) {
        lo = std::max(lo, optics_.mantle->min_wavelength_um());
        hi = std::min(hi, optics_.mantle->max_wavelength_um());
        for (double wl : optics_.mantle->breakpoints_um())
            kinks.push_back(wl);
    }
    u_min_ = lo > 0.0 ? std::log(lo) : -std::numeric_limits<double>::infinity();
    u_max_ = std::isfinite(hi) ? std::log(hi) : std::numeric_limits<double>::infinity();
    for (double wl : kinks)
        if (wl > 0.0 && std::isfinite(wl)) kinks_u_.push_back(std::log(wl));
    std::sort(kinks_u_.begin(), kinks_u_.end());
}

double PlanckNodeRule::initial_width(double a, double b) const {
    // As WavelengthRuleCurve::means: coarse below x = 2, else resonance panels 12 k wide and
    // at most half an interference period, from the index at both ends of the piece.
    const double h = density_.coarse_ln_width;
    const double x_hi = 2.0 * pi * radius_um_ / std::exp(a);
    const double x_lo = 2.0 * pi * radius_um_ / std::exp(b);
    if (!(x_hi > ripple_from_x)) return h;
    double nu = 0.1, k_min = std::numeric_limits<double>::infinity();
    for (double u : {a, b}) {
        // The ends' own wavelengths may fall a rounding error outside a table: step inside.
        const double wl = std::exp(std::clamp(u, a + 1e-12 * (b - a), b - 1e-12 * (b - a)));
        const std::complex<double> m = optics_.core->index_at_um(wl);
        nu = std::max(nu, rate(m));
        k_min = std::min(k_min, m.imag());
        if (coated_grain(optics_)) {
            const std::complex<double> mm = optics_.mantle->index_at_um(wl);
            nu = std::max(nu, rate(mm));
            k_min = std::min(k_min, mm.imag());
        }
    }
    const double ripple = ripple_width(k_min, density_);
    return k_min * x_lo >= damped_kx
               ? ripple
               : std::min(ripple, density_.periods_per_panel * pi / (nu * x_hi));
}

std::array<double, 8> PlanckNodeRule::values(double a, double b) {
    const GaussRule& g = gauss8();
    std::array<double, 8> q{};
    for (std::size_t i = 0; i < 8; ++i) {
        const double wl = std::exp(0.5 * (a + b) + 0.5 * (b - a) * g.t[i]);
        q[i] = q_abs_(wl);
        if (!std::isfinite(q[i]))
            throw NumericalError("Planck mean: Q_abs(" + num(wl) + " um) = " + num(q[i]) +
                                 " is not a finite number");
    }
    evaluations_ += 8;
    return q;
}

void PlanckNodeRule::refine(const Panel& p, int depth, std::vector<Panel>& out) {
    const GaussRule& g = gauss8();
    const double m = 0.5 * (p.a + p.b);
    const Panel left{p.a, m, values(p.a, m)}, right{m, p.b, values(m, p.b)};
    double scale = 0.0, worst = 0.0;
    for (std::size_t i = 0; i < 8; ++i) {
        scale += 0.5 * g.w[i] * std::abs(p.q[i]);
        // Node i of each half in the panel's own coordinate t in [-1, 1].
        worst = std::max(worst, std::abs(interpolate(p.q, 0.5 * (g.t[i] - 1.0)) - left.q[i]));
        worst = std::max(worst, std::abs(interpolate(p.q, 0.5 * (g.t[i] + 1.0)) - right.q[i]));
    }
    if (worst <= tolerance_ * scale || depth >= planck_max_depth) {
        out.push_back(left);
        out.push_back(right);
        return;
    }
    refine(left, depth + 1, out);
    refine(right, depth + 1, out);
}

const PlanckNodeRule::Cell& PlanckNodeRule::cell(long j) {
    if (auto it = cells_.find(j); it != cells_.end()) return it->second;
    const double h = density_.coarse_ln_width;
    Cell c;
    c.a = std::max(h * static_cast<double>(j), u_min_);
    c.b = std::min(h * static_cast<double>(j + 1), u_max_);
    if (c.b > c.a) {
        std::vector<double> cuts{c.a};
        for (auto it = std::upper_bound(kinks_u_.begin(), kinks_u_.end(), c.a);
             it != kinks_u_.end() && *it < c.b; ++it)
            if (*it - cuts.back() > 1e-12) cuts.push_back(*it);
        if (c.b - cuts.back() <= 1e-12 && cuts.size() > 1) cuts.pop_back();
        cuts.push_back(c.b);
        for (std::size_t k = 0; k + 1 < cuts.size(); ++k) {
            const double pa = cuts[k], pb = cuts[k + 1];
            // Seeds twice the wavelength rule's width: each is checked against its halves,
            // which are kept, so the nodes are at least as dense as that rule's everywhere.
            const int n = std::max(
                1, static_cast<int>(std::ceil((pb - pa) / (2.0 * initial_width(pa, pb)) - 1e-9)));
            const double step = (pb - pa) / n;
            for (int i = 0; i < n; ++i) {
                const double qa = pa + step * i, qb = i + 1 == n ? pb : qa + step;
                refine(Panel{qa, qb, values(qa, qb)}, 0, c.panels);
            }
        }
        // Product-integration weights w_k = int Q_abs L_k du, by every panel's own rule.
        const GaussRule& g = gauss8();
        const std::array<double, 8>& bw = barycentric_weights();
        for (const Panel& p : c.panels) {
            for (std::size_t i = 0; i < 8; ++i) {
                const double u = 0.5 * (p.a + p.b) + 0.5 * (p.b - p.a) * g.t[i];
                const double t = (2.0 * u - c.a - c.b) / (c.b - c.a);
                const double wq = 0.5 * (p.b - p.a) * g.w[i] * p.q[i];
                std::array<double, 8> l{};
                double total = 0.0;
                std::size_t exact = 8;
                for (std::size_t k = 0; k < 8; ++k) {
                    const double d = t - g.t[k];
                    if (d == 0.0) exact = k;
                    l[k] = d == 0.0 ? 0.0 : bw[k] / d;
                    total += l[k];
                }
                for (std::size_t k = 0; k < 8; ++k)
                    c.w[k] += wq * (exact < 8 ? (k == exact ? 1.0 : 0.0) : l[k] / total);
            }
        }
    }
    return cells_.emplace(j, std::move(c)).first->second;
}

double PlanckNodeRule::mean(const Spectrum& spectrum, const WavelengthBand& band) {
    if (!(band.low_um > 0.0 && std::isfinite(band.high_um) && band.high_um > band.low_um))
        throw InputError("spectral mean: band " + num(band.low_um) + " - " + num(band.high_um) +
                         " um is not a finite range 0 < low < high");
    const GaussRule& g = gauss8();
    const double h = density_.coarse_ln_width;
    const double u_lo = std::log(band.low_um), u_hi = std::log(band.high_um);
    if (u_lo < u_min_ - 1e-12 || u_hi > u_max_ + 1e-12)
        throw InternalError("PlanckNodeRule: the band reaches beyond the optical constants");
    double den = 0.0, sum = 0.0;
    const long j0 = static_cast<long>(std::floor(u_lo / h));
    const long j1 = static_cast<long>(std::floor(u_hi / h));
    for (long j = j0; j <= j1; ++j) {
        const Cell& c = cell(j);
        if (!(c.b > c.a) || c.b <= u_lo || c.a >= u_hi) continue;
        if (c.a >= u_lo && c.b <= u_hi) {
            // The spectrum interpolated through the cell's 8 nodes (smooth on it: see above).
            for (std::size_t k = 0; k < 8; ++k) {
                const double wl = std::exp(0.5 * (c.a + c.b) + 0.5 * (c.b - c.a) * g.t[k]);
                const double f = spectrum.f_lambda_shape(wl) * wl;
                den += 0.5 * (c.b - c.a) * g.w[k] * f;
                sum += c.w[k] * f;
            }
            continue;
        }
        for (const Panel& p : c.panels) {
            if (p.b <= u_lo || p.a >= u_hi) continue;
            const bool whole = p.a >= u_lo && p.b <= u_hi;
            const double a = std::max(p.a, u_lo), b = std::min(p.b, u_hi);
            for (std::size_t i = 0; i < 8; ++i) {
                const double u = 0.5 * (a + b) + 0.5 * (b - a) * g.t[i];
                const double wl = std::exp(u);
                const double w = 0.5 * (b - a) * g.w[i] * spectrum.f_lambda_shape(wl) * wl;
                // Q at the panel's node, or from its interpolant at a fresh node.
                const double q =
                    whole ? p.q[i] : interpolate(p.q, (2.0 * u - p.a - p.b) / (p.b - p.a));
                den += w;
                sum += w * q;
            }
        }
    }
    if (!(den > 0.0))
        throw NumericalError("spectral mean: '" + spectrum.describe() + "' has no flux between " +
                             num(band.low_um) + " and " + num(band.high_um) + " um");
    const double out = sum / den;
    if (!std::isfinite(out)) throw NumericalError("Planck mean of Q_abs is not a finite number");
    return out;
}

} // namespace holdfast::detail
