// Spectrum-weighted means <Q> = int Q F_lambda dlambda / int F_lambda dlambda.
//
// Method: substitute u = ln(lambda) (dlambda = lambda du), so the integrand Q F lambda is
// smooth and of similar width across a band spanning three or more decades. The band is cut
// into a fixed number of equal pieces in u. Each piece is first integrated once with the
// 21-point Gauss-Kronrod rule (Kronrod 1965; Piessens et al. 1983, QUADPACK, section 2.2),
// which for a smooth Q already meets the tolerance, so a mean costs 21 * pieces evaluations
// of Q. Only pieces whose error estimate exceeds their share of the tolerance are handed to
// GSL's adaptive qag (QUADPACK QAG, globally adaptive bisection), which resolves Mie ripples
// and the kinks of tabulated optical constants where they are. Splitting first keeps one
// sharp feature from starving the rest of the band, and makes the cost predictable.
//
// Exceptions must not unwind through GSL's C frames: the integrand catches them, stores the
// first one, returns 0 for the rest of that quadrature without calling Q again, and the
// exception is rethrown once GSL has returned.
#include "holdfast/spectral_mean.hpp"

#include <algorithm>
#include <cmath>
#include <exception>
#include <memory>
#include <vector>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>

#include "holdfast/errors.hpp"
#include "text_table.hpp"

namespace holdfast {
namespace {

using detail::num;

struct IntegrandState {
    const std::function<double(double)>* q = nullptr; // null: Q = 1
    const Spectrum* spectrum = nullptr;
    std::size_t q_evaluations = 0;
    std::exception_ptr error;
};

double integrand(double u, void* params) {
    auto* st = static_cast<IntegrandState*>(params);
    if (st->error) return 0.0;
    const double wavelength_um = std::exp(u);
    const double f = st->spectrum->f_lambda_shape(wavelength_um);
    // No flux, no weight: skip Q (outside a tabulated spectrum, Q may be undefined there).
    if (f == 0.0) return 0.0;
    double qv = 1.0;
    if (st->q != nullptr) {
        try {
            qv = (*st->q)(wavelength_um);
            ++st->q_evaluations;
            if (!std::isfinite(qv))
                throw NumericalError("spectral mean: Q(" + num(wavelength_um) +
                                     " um) = " + num(qv) + " is not a finite number");
        } catch (...) {
            st->error = std::current_exception();
            return 0.0;
        }
    }
    return qv * f * wavelength_um;
}

void check_settings(const SpectralMeanSettings& s) {
    if (!(s.relative_tolerance >= 1e-14 && s.relative_tolerance <= 0.1))
        throw InputError("spectral mean: relative tolerance " + num(s.relative_tolerance) +
                         " is outside the accepted range [1e-14, 0.1]");
    if (!(s.subintervals >= 1 && s.subintervals <= 10000))
        throw InputError("spectral mean: " + std::to_string(s.subintervals) +
                         " subintervals; accepted: 1 to 10000");
    if (s.max_intervals_per_piece < 1)
        throw InputError("spectral mean: max_intervals_per_piece must be at least 1");
}

void check_band(const WavelengthBand& band) {
    if (!(band.low_um > 0.0 && std::isfinite(band.high_um) && band.high_um > band.low_um))
        throw InputError("spectral mean: band " + num(band.low_um) + " - " + num(band.high_um) +
                         " um is not a finite range 0 < low < high");
}

struct Integral {
    double value = 0.0;
    double abserr = 0.0;
    std::size_t q_evaluations = 0;
};

struct WorkspaceFree {
    void operator()(gsl_integration_workspace* w) const { gsl_integration_workspace_free(w); }
};
using Workspace = std::unique_ptr<gsl_integration_workspace, WorkspaceFree>;

// How often a piece on which qag gives up (roundoff detected, or out of intervals) is cut
// into 4 and retried. Kinks of tabulated optical constants trip QUADPACK's roundoff
// heuristic (bisecting a kink barely lowers the error estimate); fresh starts on shorter
// pieces get past it. 3 levels: at most 64 sub-pieces per piece.
constexpr int max_split_depth = 3;

// qag on [a, b] in ln(lambda) to abs_tol (or the relative tolerance); on failure split as
// above, then throw NumericalError naming the wavelengths.
Integral adaptive_piece(gsl_function& f, IntegrandState& state, gsl_integration_workspace* w,
                        const SpectralMeanSettings& settings, double a, double b, double abs_tol,
                        int depth, const char* what) {
    double r = 0.0, e = 0.0;
    // An absolute target per piece, so the pieces' errors add up to at most the requested
    // share of the total (a relative target per piece would let them add up to more).
    const double rel_tol = abs_tol > 0.0 ? 0.0 : settings.relative_tolerance;
    const int status = gsl_integration_qag(
        &f, a, b, abs_tol, rel_tol, settings.max_intervals_per_piece, GSL_INTEG_GAUSS21, w, &r, &e);
    if (state.error) std::rethrow_exception(state.error);
    if (status == GSL_SUCCESS) return {r, e, 0};
    if ((status == GSL_EROUND || status == GSL_EMAXITER) && depth > 0) {
        Integral sum;
        const double h = (b - a) / 4.0;
        for (int j = 0; j < 4; ++j) {
            const Integral part =
                adaptive_piece(f, state, w, settings, a + h * j, j == 3 ? b : a + h * (j + 1),
                               abs_tol / 4.0, depth - 1, what);
            sum.value += part.value;
            sum.abserr += part.abserr;
        }
        return sum;
    }
    throw NumericalError(std::string(what) + ": GSL qag did not reach relative tolerance " +
                         num(settings.relative_tolerance) + " between " + num(std::exp(a)) +
                         " and " + num(std::exp(b)) + " um (" + gsl_strerror(status) +
                         "; error estimate " + num(e, 3) + " of " + num(r, 6) +
                         "); loosen the tolerance or use more subintervals");
}

// int Q F lambda du over the band, to relative tolerance rel_tol of the total (or of
// abs_floor where the total is smaller).
Integral integrate_band(const std::function<double(double)>* q, const Spectrum& spectrum,
                        const WavelengthBand& band, const SpectralMeanSettings& settings,
                        double abs_floor, const char* what) {
    IntegrandState state{q, &spectrum, 0, nullptr};
    gsl_function f{&integrand, &state};
    // Piece edges in ln(lambda): equal steps, plus the breakpoints inside the band.
    const double u0 = std::log(band.low_um), u1 = std::log(band.high_um);
    std::vector<double> edges;
    for (int i = 0; i <= settings.subintervals; ++i)
        edges.push_back(i == settings.subintervals ? u1
                                                   : u0 + (u1 - u0) * i / settings.subintervals);
    for (double b : settings.breakpoints_um)
        if (b > band.low_um && b < band.high_um) edges.push_back(std::log(b));
    std::sort(edges.begin(), edges.end());
    // Drop edges closer than 1e-9 in ln(lambda) to the previous one (no zero-width pieces).
    std::vector<double> kept{edges.front()};
    for (std::size_t i = 1; i < edges.size(); ++i)
        if (edges[i] - kept.back() > 1e-9 || i + 1 == edges.size()) kept.push_back(edges[i]);
    if (kept.size() > 2 && kept[kept.size() - 1] - kept[kept.size() - 2] <= 1e-9)
        kept.erase(kept.end() - 2);
    const int pieces = static_cast<int>(kept.size()) - 1;
    auto edge = [&](int i) { return kept[static_cast<std::size_t>(i)]; };

    std::vector<double> result(pieces), error(pieces);
    double total = 0.0, total_error = 0.0;
    for (int i = 0; i < pieces; ++i) {
        double resabs = 0.0, resasc = 0.0;
        gsl_integration_qk21(&f, edge(i), edge(i + 1), &result[i], &error[i], &resabs, &resasc);
        if (state.error) std::rethrow_exception(state.error);
        total += result[i];
        total_error += error[i];
    }
    const double tolerance = settings.relative_tolerance * std::max(std::abs(total), abs_floor);
    if (total_error > tolerance) {
        Workspace w(gsl_integration_workspace_alloc(settings.max_intervals_per_piece));
        if (!w) throw NumericalError(std::string(what) + ": cannot allocate GSL workspace");
        total = 0.0;
        total_error = 0.0;
        for (int i = 0; i < pieces; ++i) {
            if (error[i] > tolerance / pieces) {
                const Integral piece =
                    adaptive_piece(f, state, w.get(), settings, edge(i), edge(i + 1),
                                   tolerance / pieces, max_split_depth, what);
                result[i] = piece.value;
                error[i] = piece.abserr;
            }
            total += result[i];
            total_error += error[i];
        }
    }
    if (!std::isfinite(total))
        throw NumericalError(std::string(what) + ": the integral is not finite");
    return {total, total_error, state.q_evaluations};
}

// ln(lambda) where the spectrum's fraction below lambda crosses `target`, by bisection in
// ln(lambda) between lo and hi (fraction(lo) <= target <= fraction(hi)).
double wavelength_at_fraction(const Spectrum& s, double target, double lo, double hi) {
    double a = std::log(lo), b = std::log(hi);
    for (int i = 0; i < 200 && b - a > 1e-12; ++i) {
        const double m = 0.5 * (a + b);
        if (s.flux_fraction_below(std::exp(m)) < target)
            a = m;
        else
            b = m;
    }
    return 0.5 * (a + b);
}

} // namespace

WavelengthBand integration_band(const Spectrum& spectrum, double excluded_flux_fraction) {
    if (!(excluded_flux_fraction > 0.0 && excluded_flux_fraction < 0.5))
        throw InputError("integration band: excluded flux fraction " + num(excluded_flux_fraction) +
                         " is outside the accepted range (0, 0.5)");
    const double half = 0.5 * excluded_flux_fraction;
    double lo = spectrum.min_wavelength_um(), hi = spectrum.max_wavelength_um();
    // Open ends (a Planck curve): widen a bracket by decades until it holds the tails.
    if (!(lo > 0.0)) {
        lo = 1.0;
        for (int i = 0; i < 40 && spectrum.flux_fraction_below(lo) >= half; ++i)
            lo *= 0.1;
    }
    if (!std::isfinite(hi)) {
        hi = std::max(1.0, 10.0 * lo);
        for (int i = 0; i < 40 && 1.0 - spectrum.flux_fraction_below(hi) >= half; ++i)
            hi *= 10.0;
    }
    const double low_um = std::exp(wavelength_at_fraction(spectrum, half, lo, hi));
    const double high_um = std::exp(wavelength_at_fraction(spectrum, 1.0 - half, lo, hi));
    if (!(low_um > 0.0 && std::isfinite(high_um) && high_um > low_um))
        throw NumericalError("integration band of '" + spectrum.describe() +
                             "': no band holds all but " + num(excluded_flux_fraction) +
                             " of the flux");
    return {low_um, high_um};
}

SpectralMeanResult spectral_mean_with_diagnostics(const std::function<double(double)>& q,
                                                  const Spectrum& spectrum,
                                                  const WavelengthBand& band,
                                                  const SpectralMeanSettings& settings) {
    check_settings(settings);
    check_band(band);
    const Integral den = integrate_band(nullptr, spectrum, band, settings, 0.0,
                                        "spectral mean (flux over the band)");
    if (!(den.value > 0.0))
        throw NumericalError("spectral mean: '" + spectrum.describe() + "' has no flux between " +
                             num(band.low_um) + " and " + num(band.high_um) + " um");
    // Floor: an absolute accuracy of relative_tolerance * 1e-12 in <Q>, for a Q that is 0 or
    // changes sign over the band.
    const Integral numer =
        integrate_band(&q, spectrum, band, settings, 1e-12 * den.value, "spectral mean of Q");
    const double mean = numer.value / den.value;
    const double rel =
        numer.abserr / std::max(std::abs(numer.value), 1e-12 * den.value) + den.abserr / den.value;
    return {mean, rel, numer.q_evaluations};
}

double spectral_mean(const std::function<double(double)>& q, const Spectrum& spectrum,
                     const WavelengthBand& band, const SpectralMeanSettings& settings) {
    return spectral_mean_with_diagnostics(q, spectrum, band, settings).mean;
}

double spectral_mean(const std::function<double(double)>& q, const Spectrum& spectrum,
                     const SpectralMeanSettings& settings) {
    check_settings(settings);
    return spectral_mean(q, spectrum, integration_band(spectrum, settings.excluded_flux_fraction),
                         settings);
}

double spectral_integral(const std::function<double(double)>& g, const Spectrum& spectrum,
                         const WavelengthBand& band, const SpectralMeanSettings& settings) {
    check_settings(settings);
    check_band(band);
    return integrate_band(&g, spectrum, band, settings, 0.0, "spectral integral").value;
}

double flux_fraction_in_band(const Spectrum& spectrum, const WavelengthBand& band) {
    check_band(band);
    return std::max(0.0, spectrum.flux_fraction_below(band.high_um) -
                             spectrum.flux_fraction_below(band.low_um));
}

SpectralBandPlan plan_spectral_band(const Spectrum& spectrum,
                                    std::shared_ptr<const OpticalConstants> optics,
                                    OutOfBand choice, const SpectralMeanSettings& settings) {
    if (!optics) throw InternalError("plan_spectral_band: no optical constants given");
    const WavelengthBand band = integration_band(spectrum, settings.excluded_flux_fraction);
    const double omin = optics->min_wavelength_um(), omax = optics->max_wavelength_um();
    SpectralBandPlan plan{band, optics, 0.0, ""};
    if (band.low_um >= omin && band.high_um <= omax) return plan;
    const std::string needed = num(band.low_um, 4) + "-" + num(band.high_um, 4) + " um";
    const std::string covered = num(omin, 4) + "-" + num(omax, 4) + " um";
    switch (choice) {
    case OutOfBand::refuse:
        require_wavelength_coverage(*optics, band.low_um, band.high_um);
        return plan; // not reached: the check throws
    case OutOfBand::hold_end_values: {
        const double outside =
            (band.low_um < omin ? spectrum.flux_fraction_below(omin) : 0.0) +
            (band.high_um > omax ? 1.0 - spectrum.flux_fraction_below(omax) : 0.0);
        plan.optics = with_held_end_values(std::move(optics));
        plan.note = "optical constants cover " + covered + " but the spectrum needs " + needed +
                    "; outside the table the index is held at its end values (" +
                    num(100.0 * outside, 3) + "% of the flux falls there)";
        return plan;
    }
    case OutOfBand::limit_band: {
        plan.band = {std::max(band.low_um, omin), std::min(band.high_um, omax)};
        if (!(plan.band.high_um > plan.band.low_um))
            throw InputError("optical constants cover " + covered +
                             ", which does not overlap the band the spectrum needs (" + needed +
                             "): limit-band has nothing to integrate over");
        plan.dropped_flux_fraction = std::max(0.0, 1.0 - settings.excluded_flux_fraction -
                                                       flux_fraction_in_band(spectrum, plan.band));
        plan.note = "spectral means cover only " + num(plan.band.low_um, 4) + "-" +
                    num(plan.band.high_um, 4) + " um (the optical constants' range) instead of " +
                    needed + ", renormalised to the flux there; " +
                    num(100.0 * plan.dropped_flux_fraction, 3) + "% of the flux is left out";
        return plan;
    }
    }
    throw InternalError("plan_spectral_band: unknown out-of-band choice");
}

} // namespace holdfast
