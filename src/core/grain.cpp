// Dust grains around a star: beta, blow-out search, released orbits, drag time, temperature.
//
// References
//   Burns, J. A., Lamy, P. L. & Soter, S. 1979, Icarus 40, 1: radiation forces on small
//     particles; beta (their eq. 19), the Poynting-Robertson time (eq. 50).
//   Wyatt, S. P. & Whipple, F. L. 1950, ApJ 111, 134: Poynting-Robertson decay of orbits.
//   Murray, C. D. & Dermott, S. F. 1999, Solar System Dynamics (CUP), ch. 2: two-body
//     orbit from position and velocity (vis-viva, angular momentum, eccentricity).
//   Wyatt, M. C. 2008, ARA&A 46, 339 (from memory): the blackbody grain temperature
//     278.3 K (L/Lsun)^(1/4) (r/au)^(-1/2) (derived at equilibrium_temperature below).
//   Brent, R. P. 1973, Algorithms for Minimization without Derivatives (Prentice-Hall):
//     the root finder and minimiser used through GSL (gsl_root_fsolver_brent,
//     gsl_min_fminimizer_brent).
#include "holdfast/grain.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <exception>
#include <numbers>
#include <string>
#include <utility>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_min.h>
#include <gsl/gsl_roots.h>

#include "holdfast/constants.hpp"
#include "holdfast/errors.hpp"

namespace holdfast {
namespace {

using std::numbers::pi;
constexpr double c_m_s = constants::speed_of_light_m_s;
constexpr double G_SI = constants::gravitational_constant_SI;
constexpr double sigma_SI = constants::stefan_boltzmann_SI;

std::string num(double v) {
    char buf[64];
    std::snprintf(buf, sizeof buf, "%.6g", v);
    return buf;
}

void require_positive(double v, const char* what) {
    if (!(v > 0.0) || !std::isfinite(v))
        throw InputError(std::string(what) + " must be positive and finite, got " + num(v));
}

// A C callback for GSL that calls a C++ callable of ln(x). Exceptions must not cross GSL's C
// frames: they are caught, stored, and GSL sees a NaN (it then stops with GSL_EBADFUNC); the
// caller rethrows the stored exception.
struct LogCallback {
    const std::function<double(double)>* f = nullptr;
    double shift = 0.0; // returns f(exp(u)) - shift
    double sign = 1.0;  // or -(f(exp(u))) for the minimiser
    std::exception_ptr error;

    static double call(double u, void* self) {
        auto* cb = static_cast<LogCallback*>(self);
        try {
            return cb->sign * ((*cb->f)(std::exp(u)) - cb->shift);
        } catch (...) {
            cb->error = std::current_exception();
            return std::nan("");
        }
    }
    void rethrow_if_failed() const {
        if (error) std::rethrow_exception(error);
    }
};

struct RootSolver {
    gsl_root_fsolver* s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
    ~RootSolver() { gsl_root_fsolver_free(s); }
    RootSolver() {
        if (!s) throw NumericalError("cannot allocate GSL's Brent root solver");
    }
    RootSolver(const RootSolver&) = delete;
    RootSolver& operator=(const RootSolver&) = delete;
};

// Root of cb in [lo, hi] (values of different sign at the ends) to an absolute tolerance in
// the variable u (ln of the physical variable, so a relative tolerance in it), or, when
// residual_tolerance > 0, as soon as |cb(root)| is below it (cb should then remember its last
// values: GSL has already evaluated the root estimate).
double brent_root(LogCallback& cb, double lo, double hi, double tolerance, int max_iterations,
                  const std::string& what, double residual_tolerance = 0.0) {
    RootSolver solver;
    gsl_function fn{&LogCallback::call, &cb};
    int status = gsl_root_fsolver_set(solver.s, &fn, lo, hi);
    cb.rethrow_if_failed();
    if (status != GSL_SUCCESS)
        throw NumericalError(what +
                             ": GSL Brent root solver could not start: " + gsl_strerror(status));
    for (int i = 0; i < max_iterations; ++i) {
        status = gsl_root_fsolver_iterate(solver.s);
        cb.rethrow_if_failed();
        if (status != GSL_SUCCESS)
            throw NumericalError(what + ": GSL Brent root solver failed: " + gsl_strerror(status));
        const double a = gsl_root_fsolver_x_lower(solver.s);
        const double b = gsl_root_fsolver_x_upper(solver.s);
        const double root = gsl_root_fsolver_root(solver.s);
        if (gsl_root_test_interval(a, b, tolerance, 0.0) == GSL_SUCCESS) return root;
        if (residual_tolerance > 0.0) {
            const double r = LogCallback::call(root, &cb);
            cb.rethrow_if_failed();
            if (gsl_root_test_residual(r, residual_tolerance) == GSL_SUCCESS) return root;
        }
    }
    throw NumericalError(what + ": GSL Brent root solver did not converge in " +
                         std::to_string(max_iterations) + " iterations");
}

} // namespace

// ---- beta ------------------------------------------------------------------------------------

double beta(Power luminosity, Mass star_mass, MassDensity density, Length radius, double qpr_mean) {
    require_positive(luminosity.value(), "the luminosity");
    require_positive(star_mass.value(), "the stellar mass");
    require_positive(density.value(), "the grain density");
    require_positive(radius.value(), "the grain radius");
    if (!(qpr_mean >= 0.0) || !std::isfinite(qpr_mean))
        throw InputError("<Q_pr> must be finite and not negative, got " + num(qpr_mean));
    // Burns, Lamy & Soter (1979) eq. 19: F_rad = L <Q_pr> pi s^2 / (4 pi r^2 c) over
    // F_grav = G M (4/3) pi s^3 rho / r^2.
    return 3.0 * luminosity.value() * qpr_mean /
           (16.0 * pi * G_SI * star_mass.value() * c_m_s * density.value() * radius.value());
}

BetaModel::BetaModel(Power luminosity, Mass star_mass, MassDensity density, MeanEfficiency qpr_mean)
    : coefficient_kg_m2_(0.0), density_kg_m3_(density.value()), qpr_mean_(std::move(qpr_mean)) {
    require_positive(luminosity.value(), "the luminosity");
    require_positive(star_mass.value(), "the stellar mass");
    require_positive(density.value(), "the grain density");
    if (!qpr_mean_) throw InternalError("BetaModel needs an efficiency function");
    coefficient_kg_m2_ = 3.0 * luminosity.value() / (16.0 * pi * G_SI * star_mass.value() * c_m_s);
}

double BetaModel::qpr_mean_at_um(double radius_um) const {
    require_positive(radius_um, "the grain radius");
    const double q = qpr_mean_(radius_um);
    check_qpr_mean(q, radius_um);
    return q;
}

void BetaModel::check_qpr_mean(double qpr_mean, double radius_um) {
    if (!(qpr_mean >= 0.0) || !std::isfinite(qpr_mean))
        throw NumericalError("<Q_pr> for a grain of radius " + num(radius_um) +
                             " um is not a finite non-negative number (" + num(qpr_mean) + ")");
}

double BetaModel::beta_from_qpr(double qpr_mean, double radius_um) const {
    return coefficient_kg_m2_ * qpr_mean / (density_kg_m3_ * radius_um * 1e-6);
}

double BetaModel::beta_at_um(double radius_um) const {
    return beta_from_qpr(qpr_mean_at_um(radius_um), radius_um);
}

// ---- release --------------------------------------------------------------------------------

void check_release_point(const ReleasePoint& release) {
    if (!(release.eccentricity >= 0.0 && release.eccentricity < 1.0))
        throw InputError("the parent's eccentricity must be in [0, 1), got " +
                         num(release.eccentricity));
    if (!std::isfinite(release.true_anomaly_rad))
        throw InputError("the release true anomaly must be finite");
}

// Derivation. At release the grain has its parent's position r and velocity v, with
// v^2 = G M (2/r - 1/a) (vis-viva) and r = a (1 - e^2) / (1 + e cos f). Radiation pressure
// weakens gravity to (1 - beta) G M, so the grain's specific orbital energy is
//   E = v^2/2 - (1 - beta) G M / r = (G M / r) (beta - r / (2a)).
// The grain is bound while E < 0, so it escapes when beta >= r / (2a), that is
//   beta_crit = (1 - e^2) / (2 (1 + e cos f)).
// A circular parent gives 1/2; release at pericentre (1 - e)/2, at apocentre (1 + e)/2.
double critical_beta(const ReleasePoint& release) {
    check_release_point(release);
    const double e = release.eccentricity;
    return (1.0 - e * e) / (2.0 * (1.0 + e * std::cos(release.true_anomaly_rad)));
}

ReleasedOrbit released_orbit(Mass star_mass, double beta_value, const ReleasePoint& release,
                             Length distance) {
    require_positive(star_mass.value(), "the stellar mass");
    require_positive(distance.value(), "the release distance");
    check_release_point(release);
    if (!(beta_value >= 0.0) || !std::isfinite(beta_value))
        throw InputError("beta must be finite and not negative, got " + num(beta_value));
    const double mu = G_SI * star_mass.value();
    const double r = distance.value();
    const double e = release.eccentricity;
    const double one_e_cos = 1.0 + e * std::cos(release.true_anomaly_rad);
    const double b_crit = critical_beta(release);

    ReleasedOrbit out;
    // Specific energy E = (mu / r)(beta - beta_crit) (see critical_beta above).
    if (beta_value >= b_crit) {
        out.bound = false;
        // E = v_inf^2 / 2 once the grain is far away.
        out.speed_at_infinity =
            Velocity::from_value(std::sqrt(2.0 * mu * (beta_value - b_crit) / r));
        return out;
    }
    out.bound = true;
    // beta < beta_crit <= (1 + e)/2 < 1 here, so the reduced attraction is still positive.
    const double one_minus_beta = 1.0 - beta_value;
    // a' = -mu' / (2E) with mu' = (1 - beta) mu (vis-viva, Murray & Dermott eq. 2.134).
    const double a = one_minus_beta * r / (2.0 * (b_crit - beta_value));
    // The parent's specific angular momentum h^2 = mu r (1 + e cos f) is kept by the grain;
    // e'^2 = 1 + 2 E h^2 / mu'^2 (Murray & Dermott eq. 2.135 rearranged).
    double e2 = 1.0 - 2.0 * (b_crit - beta_value) * one_e_cos / (one_minus_beta * one_minus_beta);
    e2 = std::max(e2, 0.0); // rounding below zero for a circular orbit
    const double ecc = std::sqrt(e2);
    // Semi-latus rectum p' = h^2 / mu'; q = p' / (1 + e') avoids cancelling a (1 - e').
    const double p = r * one_e_cos / one_minus_beta;
    out.semi_major_axis = metres(a);
    out.eccentricity = ecc;
    out.pericentre = metres(p / (1.0 + ecc));
    out.apocentre = metres(a * (1.0 + ecc));
    return out;
}

// ---- drag ------------------------------------------------------------------------------------

Time poynting_robertson_time(Mass star_mass, Length distance, double beta_value) {
    require_positive(star_mass.value(), "the stellar mass");
    require_positive(distance.value(), "the distance");
    require_positive(beta_value, "beta");
    // Burns, Lamy & Soter (1979) eq. 50 (Wyatt & Whipple 1950): t = c r^2 / (4 G M beta).
    const double r = distance.value();
    return seconds(c_m_s * r * r / (4.0 * G_SI * star_mass.value() * beta_value));
}

// ---- blow-out search ---------------------------------------------------------------------

namespace {
// The scan grid both radius searches take: at least 2 positive, increasing radii, each with a
// finite value. The messages are the caller's.
void check_scan_grid(std::span<const double> radii_um, std::span<const double> values,
                     const char* too_few, const char* value_name, const char* not_increasing) {
    const std::size_t n = radii_um.size();
    if (n < 2 || values.size() != n) throw InputError(too_few);
    for (std::size_t i = 0; i < n; ++i) {
        require_positive(radii_um[i], "a grain radius");
        if (!std::isfinite(values[i]))
            throw NumericalError(value_name + num(radii_um[i]) + " um is not finite");
        if (i > 0 && !(radii_um[i] > radii_um[i - 1])) throw InputError(not_increasing);
    }
}
} // namespace

BlowoutSearch search_beta_curve(const std::function<double(double radius_um)>& beta_at_um,
                                std::span<const double> scan_radii_um,
                                std::span<const double> scan_beta, double beta_crit,
                                const BlowoutSearchSettings& settings) {
    const std::size_t n = scan_radii_um.size();
    check_scan_grid(scan_radii_um, scan_beta,
                    "the blow-out search needs at least 2 radii, each with its beta", "beta at ",
                    "the grain radii of the blow-out search must increase");
    if (!std::isfinite(beta_crit) || !(beta_crit > 0.0))
        throw InputError("the critical beta must be positive, got " + num(beta_crit));
    if (!(settings.radius_relative_tolerance > 0.0))
        throw InputError("the blow-out radius tolerance must be positive");

    BlowoutSearch out;
    out.beta_crit = beta_crit;

    LogCallback cb;
    cb.f = &beta_at_um;
    cb.shift = beta_crit;
    for (std::size_t i = 0; i < n; ++i) {
        const double g = scan_beta[i] - beta_crit;
        if (g == 0.0) {
            out.blowout_radii_um.push_back(scan_radii_um[i]);
            continue;
        }
        if (i + 1 == n) break;
        const double g_next = scan_beta[i + 1] - beta_crit;
        if (g_next == 0.0 || (g > 0.0) == (g_next > 0.0)) continue;
        const double u = brent_root(cb, std::log(scan_radii_um[i]), std::log(scan_radii_um[i + 1]),
                                    settings.radius_relative_tolerance, settings.max_iterations,
                                    "blow-out radius between " + num(scan_radii_um[i]) + " and " +
                                        num(scan_radii_um[i + 1]) + " um");
        out.blowout_radii_um.push_back(std::exp(u));
    }

    const auto it = std::max_element(scan_beta.begin(), scan_beta.end());
    const auto k = static_cast<std::size_t>(it - scan_beta.begin());
    out.beta_max = *it;
    out.radius_at_beta_max_um = scan_radii_um[k];
    out.peak_at_range_edge = (k == 0 || k + 1 == n);
    if (out.peak_at_range_edge) return out;

    // Refine the interior maximum: minimise -beta(ln s) on the two neighbouring intervals.
    gsl_min_fminimizer* m = gsl_min_fminimizer_alloc(gsl_min_fminimizer_brent);
    if (!m) throw NumericalError("cannot allocate GSL's Brent minimiser");
    struct Free {
        gsl_min_fminimizer* p;
        ~Free() { gsl_min_fminimizer_free(p); }
    } guard{m};
    LogCallback neg;
    neg.f = &beta_at_um;
    neg.sign = -1.0;
    gsl_function fn{&LogCallback::call, &neg};
    const double lo = std::log(scan_radii_um[k - 1]);
    const double hi = std::log(scan_radii_um[k + 1]);
    int status =
        gsl_min_fminimizer_set_with_values(m, &fn, std::log(scan_radii_um[k]), -scan_beta[k], lo,
                                           -scan_beta[k - 1], hi, -scan_beta[k + 1]);
    // GSL's Brent set-up already evaluates beta once; an exception thrown there (a sweep's stop
    // request among them) must reach the caller as itself, not as GSL's "bad function".
    neg.rethrow_if_failed();
    // A flat top (equal neighbours) does not bracket strictly: keep the grid maximum then.
    if (status == GSL_EINVAL) return out;
    if (status != GSL_SUCCESS)
        throw NumericalError(std::string("peak of beta: GSL Brent minimiser could not start: ") +
                             gsl_strerror(status));
    for (int i = 0;; ++i) {
        if (i == settings.max_iterations)
            throw NumericalError("peak of beta: GSL Brent minimiser did not converge in " +
                                 std::to_string(settings.max_iterations) + " iterations");
        status = gsl_min_fminimizer_iterate(m);
        neg.rethrow_if_failed();
        if (status != GSL_SUCCESS)
            throw NumericalError(std::string("peak of beta: GSL Brent minimiser failed: ") +
                                 gsl_strerror(status));
        if (gsl_min_test_interval(gsl_min_fminimizer_x_lower(m), gsl_min_fminimizer_x_upper(m),
                                  settings.radius_relative_tolerance, 0.0) == GSL_SUCCESS)
            break;
    }
    const double best = -gsl_min_fminimizer_f_minimum(m);
    if (best >= out.beta_max) {
        out.beta_max = best;
        out.radius_at_beta_max_um = std::exp(gsl_min_fminimizer_x_minimum(m));
    }
    return out;
}

// ---- temperature ---------------------------------------------------------------------------

double finite_disc_factor(Length distance, Length star_radius) {
    require_positive(star_radius.value(), "the stellar radius");
    require_positive(distance.value(), "the distance");
    const double u = std::pow(star_radius.value() / distance.value(), 2);
    if (u > 1.0)
        throw InputError("the distance " + num(in_astronomical_units(distance)) +
                         " au is inside the star (radius " +
                         num(in_astronomical_units(star_radius)) + " au)");
    // A sphere absorbs from every direction, so it collects intensity B over the star's solid
    // angle 2 pi (1 - cos theta*), sin theta* = R / r; relative to the far-field flux
    // L / (4 pi r^2) = pi B R^2 / r^2 that is 2 (r/R)^2 (1 - sqrt(1 - u)) = 2 / (1 + sqrt(1 - u)).
    return 2.0 / (1.0 + std::sqrt(1.0 - u));
}

namespace {

void check_temperature_settings(const TemperatureSettings& s) {
    if (!(s.lowest_K > 0.0) || !(s.highest_K > s.lowest_K) || !std::isfinite(s.highest_K))
        throw InputError("the temperature search range must satisfy 0 < lowest < highest, got " +
                         num(s.lowest_K) + " to " + num(s.highest_K) + " K");
    if (!(s.relative_tolerance > 0.0) || !(s.residual_tolerance >= 0.0) || s.max_iterations < 1)
        throw InputError("the temperature tolerance and iteration limit must be positive");
}

// T^4 <Q_abs>_T = A solved for T (A = target_K4) by GSL's Brent method in u = ln T, so the
// tolerance on u is a relative one on T. The bracket grows from `guess_K` towards the root by
// steps of `first_step` in u, doubling each time; `distance_au` names the search in messages.
struct BalanceSolution {
    double temperature_K = 0.0;
    double log_residual = 0.0; // ln(emitted / absorbed) at temperature_K
};

BalanceSolution solve_balance(double target_K4, const PlanckMean& planck,
                              const TemperatureSettings& st, double guess_K, double first_step,
                              double distance_au) {
    const double log_target = std::log(target_K4);
    // The last few evaluations, so the points the bracket search already has, and the root
    // estimate GSL has just computed, cost no second Planck mean.
    struct Memo {
        double t_K = -1.0;
        double value = 0.0;
    };
    std::array<Memo, 4> memo{};
    std::size_t slot = 0;
    const std::function<double(double)> balance = [&](double t_K) {
        for (const Memo& m : memo)
            if (m.t_K == t_K) return m.value;
        const double q = planck(t_K);
        if (!(q > 0.0) || !std::isfinite(q))
            throw NumericalError("the grain's Planck-mean absorption efficiency at " + num(t_K) +
                                 " K is not a positive number (" + num(q) + ")");
        const double value = 4.0 * std::log(t_K) + std::log(q);
        memo[slot] = {t_K, value};
        slot = (slot + 1) % memo.size();
        return value;
    };
    LogCallback cb;
    cb.f = &balance;
    cb.shift = log_target;

    const double lo_limit = std::log(st.lowest_K);
    const double hi_limit = std::log(st.highest_K);
    double u0 = std::clamp(std::log(guess_K), lo_limit, hi_limit);
    double g0 = LogCallback::call(u0, &cb);
    cb.rethrow_if_failed();
    if (g0 == 0.0) return {std::exp(u0), 0.0};
    double step = (g0 < 0.0 ? 1.0 : -1.0) * first_step;
    double u1 = u0;
    double g1 = g0;
    while (true) {
        const double next = std::clamp(u1 + step, lo_limit, hi_limit);
        if (next == u1)
            throw NumericalError("no grain temperature between " + num(st.lowest_K) + " and " +
                                 num(st.highest_K) + " K balances absorbed and emitted power at " +
                                 num(distance_au) + " au");
        u0 = u1;
        g0 = g1;
        u1 = next;
        g1 = LogCallback::call(u1, &cb);
        cb.rethrow_if_failed();
        if (g1 == 0.0) return {std::exp(u1), 0.0};
        if ((g0 < 0.0) != (g1 < 0.0)) break;
        step *= 2.0;
    }
    const double u =
        brent_root(cb, std::min(u0, u1), std::max(u0, u1), st.relative_tolerance, st.max_iterations,
                   "grain temperature at " + num(distance_au) + " au", st.residual_tolerance);
    // GSL's root estimate is a point it has evaluated, so this comes from the memo.
    const double residual = LogCallback::call(u, &cb);
    cb.rethrow_if_failed();
    return {std::exp(u), residual};
}

// Absorbed = emitted: <Q_abs>_* (L / 4 pi r^2) D pi s^2 = 4 pi s^2 <Q_abs>_T sigma T^4, so
// T^4 <Q_abs>_T = L <Q_abs>_* D / (16 pi sigma r^2) =: A, in K^4.
double absorbed_side_K4(Power luminosity, Length star_radius, Length distance,
                        double qabs_star_mean) {
    const double d = finite_disc_factor(distance, star_radius);
    const double r = distance.value();
    return luminosity.value() * qabs_star_mean * d / (16.0 * pi * sigma_SI * r * r);
}

} // namespace

// The blackbody limit (Q_abs = 1 in starlight and in the infrared) far from the star (D = 1):
// pi s^2 L / (4 pi r^2) = 4 pi s^2 sigma T^4 gives T = (L / (16 pi sigma r^2))^(1/4). With the
// IAU 2015 solar luminosity, the au and CODATA 2018 sigma, (Lsun / (16 pi sigma au^2))^(1/4) =
// 278.3 K, so T = 278.3 K (L/Lsun)^(1/4) (r/au)^(-1/2), the law quoted by Wyatt (2008; recalled
// from memory); tests/grain_test.cpp checks it.
Temperature equilibrium_temperature(Power luminosity, Length star_radius, Length distance,
                                    double qabs_star_mean, const PlanckMean& qabs_planck_mean,
                                    const TemperatureSettings& settings) {
    require_positive(luminosity.value(), "the luminosity");
    require_positive(qabs_star_mean, "the grain's mean absorption efficiency in starlight");
    if (!qabs_planck_mean) throw InternalError("equilibrium_temperature needs a Planck mean");
    check_temperature_settings(settings);
    const double target = absorbed_side_K4(luminosity, star_radius, distance, qabs_star_mean);
    // Bracket from the blackbody value T = A^(1/4), doubling the range.
    return kelvin(solve_balance(target, qabs_planck_mean, settings, std::pow(target, 0.25),
                                std::log(2.0), in_astronomical_units(distance))
                      .temperature_K);
}

GrainTemperatureModel::GrainTemperatureModel(Power luminosity, Length star_radius,
                                             double qabs_star_mean, PlanckMean qabs_planck_mean,
                                             TemperatureSettings settings)
    : luminosity_(luminosity), star_radius_(star_radius), qabs_star_mean_(qabs_star_mean),
      planck_(std::move(qabs_planck_mean)), settings_(settings) {
    require_positive(luminosity.value(), "the luminosity");
    require_positive(star_radius.value(), "the stellar radius");
    require_positive(qabs_star_mean, "the grain's mean absorption efficiency in starlight");
    if (!planck_) throw InternalError("GrainTemperatureModel needs a Planck mean");
    check_temperature_settings(settings_);
}

double GrainTemperatureModel::absorbed_K4(Length distance) const {
    return absorbed_side_K4(luminosity_, star_radius_, distance, qabs_star_mean_);
}

Temperature GrainTemperatureModel::temperature(Length distance) const {
    const double target = absorbed_K4(distance);
    return kelvin(solve_balance(target, planck_, settings_, std::pow(target, 0.25), std::log(2.0),
                                in_astronomical_units(distance))
                      .temperature_K);
}

std::vector<Temperature>
GrainTemperatureModel::temperatures(std::span<const Length> distances) const {
    std::vector<Temperature> out;
    out.reserve(distances.size());
    for (const TemperatureSolution& t : solve(distances))
        out.push_back(t.temperature);
    return out;
}

std::vector<TemperatureSolution>
GrainTemperatureModel::solve(std::span<const Length> distances) const {
    std::vector<TemperatureSolution> out;
    out.reserve(distances.size());
    // ln A and ln T of the last two solutions.
    std::array<double, 2> log_a{};
    std::array<double, 2> log_t{};
    for (std::size_t i = 0; i < distances.size(); ++i) {
        const double target = absorbed_K4(distances[i]);
        const double la = std::log(target);
        // First guess: the blackbody law T ~ A^(1/4) from scratch or from one solution; from
        // two, the slope d ln T / d ln A = 1 / (4 + d ln<Q>_T / d ln T) they show, so the guess
        // is off only by the curve's bending. The first bracket step is a tenth of the
        // predicted change (at least 1e-7), or a factor 1.05 with one solution.
        double guess_log_t = 0.25 * la;
        double step = std::log(2.0);
        if (i == 1) {
            guess_log_t = log_t[1] + 0.25 * (la - log_a[1]);
            step = std::log(1.05);
        } else if (i >= 2 && log_a[1] != log_a[0]) {
            const double slope = (log_t[1] - log_t[0]) / (log_a[1] - log_a[0]);
            const double change = slope * (la - log_a[1]);
            guess_log_t = log_t[1] + change;
            step = std::clamp(0.1 * std::abs(change), 1e-7, std::log(1.05));
        } else if (i >= 2) {
            guess_log_t = log_t[1] + 0.25 * (la - log_a[1]);
            step = std::log(1.05);
        }
        const BalanceSolution b = solve_balance(target, planck_, settings_, std::exp(guess_log_t),
                                                step, in_astronomical_units(distances[i]));
        out.push_back({kelvin(b.temperature_K), std::expm1(b.log_residual)});
        log_a = {log_a[1], la};
        log_t = {log_t[1], std::log(b.temperature_K)};
    }
    return out;
}

double GrainTemperatureModel::balance_residual(Length distance, Temperature temperature) const {
    require_positive(temperature.value(), "the grain temperature");
    const double t = temperature.value();
    return t * t * t * t * planck_(t) / absorbed_K4(distance) - 1.0;
}

std::optional<Length> GrainTemperatureModel::sublimation_distance(Temperature t_sub) const {
    require_positive(t_sub.value(), "the sublimation temperature");
    return holdfast::sublimation_distance(luminosity_, star_radius_, qabs_star_mean_, t_sub,
                                          planck_(t_sub.value()));
}

namespace {
// The arguments both sublimation functions take, each required positive.
void check_sublimation_inputs(Power luminosity, double qabs_star_mean,
                              Temperature sublimation_temperature,
                              double qabs_planck_mean_at_sublimation) {
    require_positive(luminosity.value(), "the luminosity");
    require_positive(qabs_star_mean, "the grain's mean absorption efficiency in starlight");
    require_positive(sublimation_temperature.value(), "the sublimation temperature");
    require_positive(qabs_planck_mean_at_sublimation,
                     "the grain's Planck-mean absorption efficiency");
}
} // namespace

double sublimation_margin(Power luminosity, Length star_radius, Length distance,
                          double qabs_star_mean, Temperature sublimation_temperature,
                          double qabs_planck_mean_at_sublimation) {
    check_sublimation_inputs(luminosity, qabs_star_mean, sublimation_temperature,
                             qabs_planck_mean_at_sublimation);
    const double t = sublimation_temperature.value();
    return std::log(absorbed_side_K4(luminosity, star_radius, distance, qabs_star_mean)) -
           std::log(t * t * t * t * qabs_planck_mean_at_sublimation);
}

RadiusIntervals positive_radius_intervals(const std::function<double(double radius_um)>& margin,
                                          std::span<const double> scan_radii_um,
                                          std::span<const double> scan_margin,
                                          const BlowoutSearchSettings& settings) {
    const std::size_t n = scan_radii_um.size();
    check_scan_grid(scan_radii_um, scan_margin,
                    "the radius search needs at least 2 radii, each with its value",
                    "the searched function at ", "the grain radii of the search must increase");
    if (!(settings.radius_relative_tolerance > 0.0))
        throw InputError("the radius tolerance must be positive");
    LogCallback cb;
    cb.f = &margin;
    RadiusIntervals out;
    bool inside = scan_margin[0] >= 0.0;
    if (inside) {
        out.from_um.push_back(scan_radii_um[0]);
        out.includes_smallest = true;
    }
    for (std::size_t i = 0; i + 1 < n; ++i) {
        const double g0 = scan_margin[i];
        const double g1 = scan_margin[i + 1];
        if ((g0 >= 0.0) == (g1 >= 0.0)) continue;
        const double lo = scan_radii_um[i];
        const double hi = scan_radii_um[i + 1];
        double edge = 0.0;
        if (g0 == 0.0) {
            edge = lo; // leaving at a grid point
        } else if (g1 == 0.0) {
            edge = hi; // entering at a grid point
        } else {
            edge = std::exp(brent_root(cb, std::log(lo), std::log(hi),
                                       settings.radius_relative_tolerance, settings.max_iterations,
                                       "radius between " + num(lo) + " and " + num(hi) + " um"));
        }
        if (inside)
            out.to_um.push_back(edge);
        else
            out.from_um.push_back(edge);
        inside = !inside;
    }
    if (inside) {
        out.to_um.push_back(scan_radii_um[n - 1]);
        out.includes_largest = true;
    }
    return out;
}

std::optional<Length> sublimation_distance(Power luminosity, Length star_radius,
                                           double qabs_star_mean,
                                           Temperature sublimation_temperature,
                                           double qabs_planck_mean_at_sublimation) {
    check_sublimation_inputs(luminosity, qabs_star_mean, sublimation_temperature,
                             qabs_planck_mean_at_sublimation);
    require_positive(star_radius.value(), "the stellar radius");
    const double t = sublimation_temperature.value();
    const double big_r = star_radius.value();
    // The balance of equilibrium_temperature with D (r/R) written out: with u = (R/r)^2,
    // 2 (1 - sqrt(1 - u)) / R^2 = K, K = 16 pi sigma T^4 <Q_abs>_T / (L <Q_abs>_*).
    // With a = K R^2 / 2: sqrt(1 - u) = 1 - a, u = a (2 - a).
    const double k = 16.0 * pi * sigma_SI * t * t * t * t * qabs_planck_mean_at_sublimation /
                     (luminosity.value() * qabs_star_mean);
    const double a = 0.5 * k * big_r * big_r;
    if (a > 1.0) return std::nullopt;
    return metres(big_r / std::sqrt(a * (2.0 - a)));
}

} // namespace holdfast
