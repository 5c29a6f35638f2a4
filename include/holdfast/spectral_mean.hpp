#pragma once
// Spectrum-weighted mean of an efficiency: <Q> = int Q(lambda) F_lambda dlambda / int F_lambda
// dlambda.
#include <cstddef>
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "holdfast/material.hpp"
#include "holdfast/star.hpp"

namespace holdfast {

struct SpectralMeanSettings {
    double relative_tolerance = 1e-6;     // of the GSL adaptive quadrature
    double excluded_flux_fraction = 1e-6; // flux left outside the integration band
    // The band is cut into this many equal pieces in ln(lambda), each integrated on its own
    // (Gauss-Kronrod 21 points first, GSL qag only where that is not yet accurate enough), so
    // a smooth Q costs subintervals * 21 evaluations and a rippled Q is refined where needed.
    int subintervals = 8;
    // Largest number of bisections GSL qag may make within one piece (its workspace size).
    std::size_t max_intervals_per_piece = 1000;
    // Wavelengths (um) where Q has kinks (OpticalConstants::breakpoints_um, the rows of an nk
    // table): the band is also cut there, so each piece is smooth. Without them a Q with a
    // kink at every row of a dense table costs 10-50 times more evaluations (measured: a
    // 600-row zig-zag table, 266574 Q calls at 1e-6 without, about 13000 with).
    std::vector<double> breakpoints_um;
};

struct WavelengthBand {
    double low_um = 0.0;
    double high_um = 0.0;
};

// The band that carries all but `excluded_flux_fraction` of the spectrum's flux (half of it
// cut on each side). For a Planck spectrum the edges come from the analytic blackbody
// fraction (blackbody_fraction_below, star.hpp); for a tabulated one from its exact
// cumulative flux, so it lies within the table. excluded_flux_fraction must be in (0, 0.5);
// InputError otherwise.
WavelengthBand integration_band(const Spectrum& spectrum, double excluded_flux_fraction);

// <Q> over `band` (default: integration_band of the spectrum), integrating in ln(lambda).
// Throws NumericalError naming what failed if GSL does not converge, or if Q returns a value
// that is not finite; exceptions thrown by Q are passed on unchanged.
double spectral_mean(const std::function<double(double wavelength_um)>& q, const Spectrum& spectrum,
                     const SpectralMeanSettings& settings = {});
double spectral_mean(const std::function<double(double wavelength_um)>& q, const Spectrum& spectrum,
                     const WavelengthBand& band, const SpectralMeanSettings& settings = {});

// The same with what it cost: the mean, the quadrature's error estimate relative to it (an
// upper bound in practice: Gauss-Kronrod estimates are pessimistic for smooth integrands),
// and how many times Q was called.
struct SpectralMeanResult {
    double mean = 0.0;
    double estimated_relative_error = 0.0;
    std::size_t q_evaluations = 0;
};
SpectralMeanResult
spectral_mean_with_diagnostics(const std::function<double(double wavelength_um)>& q,
                               const Spectrum& spectrum, const WavelengthBand& band,
                               const SpectralMeanSettings& settings = {});

// int g(lambda) F_lambda dlambda over `band`, with dlambda in micrometres (so for a Planck
// spectrum and g = 1 it approaches sigma T^4 / pi in W m^-2 sr^-1 as the band widens).
double spectral_integral(const std::function<double(double wavelength_um)>& g,
                         const Spectrum& spectrum, const WavelengthBand& band,
                         const SpectralMeanSettings& settings = {});

// Fraction of the spectrum's whole flux inside `band`.
double flux_fraction_in_band(const Spectrum& spectrum, const WavelengthBand& band);

// How to integrate a spectrum against optics that may not cover its band (OutOfBand in
// material.hpp). `optics` is what Q should be computed from (wrapped for hold_end_values),
// `band` what to pass to spectral_mean; `dropped_flux_fraction` the flux left out beyond the
// excluded_flux_fraction (limit_band only; 0 otherwise); `note` a sentence for the report
// (empty when the optics cover the band).
struct SpectralBandPlan {
    WavelengthBand band;
    std::shared_ptr<const OpticalConstants> optics;
    double dropped_flux_fraction = 0.0;
    std::string note;
};
// Throws InputError for OutOfBand::refuse when the optics do not cover the band (naming both
// ranges), and for limit_band when they do not overlap it at all.
SpectralBandPlan plan_spectral_band(const Spectrum& spectrum,
                                    std::shared_ptr<const OpticalConstants> optics,
                                    OutOfBand choice, const SpectralMeanSettings& settings = {});

} // namespace holdfast
