#pragma once
// Spectrum-weighted mean of an efficiency: <Q> = int Q(lambda) F_lambda dlambda / int F_lambda dlambda.
#include <functional>

#include "holdfast/star.hpp"

namespace holdfast {

struct SpectralMeanSettings {
    double relative_tolerance = 1e-6;      // of the GSL adaptive quadrature
    double excluded_flux_fraction = 1e-6;  // flux left outside the integration band
};

struct WavelengthBand {
    double low_um = 0.0;
    double high_um = 0.0;
};

// The band that carries all but `excluded_flux_fraction` of the spectrum's flux (half of it
// cut on each side).
WavelengthBand integration_band(const Spectrum& spectrum, double excluded_flux_fraction);

// <Q> over `band` (default: integration_band of the spectrum), integrating in ln(lambda).
// Throws NumericalError naming what failed if GSL does not converge.
double spectral_mean(const std::function<double(double wavelength_um)>& q, const Spectrum& spectrum,
                     const SpectralMeanSettings& settings = {});
double spectral_mean(const std::function<double(double wavelength_um)>& q, const Spectrum& spectrum,
                     const WavelengthBand& band, const SpectralMeanSettings& settings = {});

} // namespace holdfast
