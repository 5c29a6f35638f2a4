#pragma once
// The star: luminosity, mass, effective temperature, radius and the shape of its spectrum.
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "holdfast/units.hpp"

namespace holdfast {

// Shape of the stellar spectrum F_lambda, in arbitrary units (only ratios are used; the
// luminosity sets the scale).
class Spectrum {
  public:
    virtual ~Spectrum() = default;
    // Plain double in micrometres: this sits inside the spectral quadrature.
    virtual double f_lambda_shape(double wavelength_um) const = 0;
    // Wavelength range where the spectrum is defined (a Planck curve: everywhere > 0).
    virtual double min_wavelength_um() const = 0;
    virtual double max_wavelength_um() const = 0;
    virtual std::string describe() const = 0;
    // Fraction of the spectrum's whole flux (int F_lambda dlambda over its range) that lies
    // below `wavelength_um`: 0 at min_wavelength_um(), 1 at max_wavelength_um(). Planck and
    // tabulated spectra answer exactly (analytic series, power-law segments); the default
    // integrates f_lambda_shape numerically in ln(lambda) and throws NumericalError if that
    // fails.
    virtual double flux_fraction_below(double wavelength_um) const;
};

// Planck B_lambda(T) as the spectrum shape. f_lambda_shape returns
// planck_b_lambda_W_m2_sr_um(wavelength_um, T), so int f dlambda[um] = sigma T^4 / pi.
// Throws InputError unless T is finite and > 0.
std::shared_ptr<const Spectrum> planck_spectrum(Temperature teff);

// Planck's law per unit wavelength, B_lambda = 2 h c^2 / lambda^5 / (exp(hc / lambda k T) - 1),
// in W m^-2 sr^-1 um^-1. Plain doubles: the quadrature hot path. Safe for any wavelength > 0
// and T > 0 (no overflow of exp: returns 0 where B_lambda underflows).
double planck_b_lambda_W_m2_sr_um(double wavelength_um, double temperature_K);

// Fraction of a blackbody's flux at temperature T below / above a wavelength
// (Widger & Woodall 1976 series). Each is accurate in its own small tail, so use `above`
// for long-wavelength cuts and `below` for short ones; below + above = 1.
double blackbody_fraction_below(double wavelength_um, double temperature_K);
double blackbody_fraction_above(double wavelength_um, double temperature_K);

// Fraction of a blackbody at T outside [low_um, high_um]: how much of the flux a tabulated
// spectrum covering only that band would miss if the star were a blackbody at T (the CLI
// warns when this exceeds 1%).
double blackbody_flux_fraction_outside(double low_um, double high_um, double temperature_K);

// A tabulated spectrum: wavelengths (strictly increasing, > 0, in micrometres) and F_lambda
// (>= 0, finite, not all 0, any unit). Between rows F is interpolated as a power law (linear
// in log-log); where an end value is 0, linearly. Outside the table F = 0. At least
// `minimum_spectrum_rows` rows. Throws InputError naming the row (1-based) that is wrong.
inline constexpr std::size_t minimum_spectrum_rows = 3;
std::shared_ptr<const Spectrum> tabulated_spectrum(std::vector<double> wavelength_um,
                                                   std::vector<double> f_lambda,
                                                   std::string description);

// Reads a spectrum file: two columns, wavelength and F_lambda, separated by spaces, tabs or
// commas; '#' starts a comment, blank lines are skipped. Wavelengths are in
// `wavelength_unit` (default micrometres); F_lambda in any consistent unit (only its shape
// is used). Throws DataFileError naming the file and line for a malformed, non-finite,
// negative, unsorted or duplicate row, or fewer than minimum_spectrum_rows rows.
std::shared_ptr<const Spectrum> read_spectrum_file(const std::string& path,
                                                   Length wavelength_unit = micrometres(1.0));

struct Star {
    std::string name;
    Power luminosity;
    Mass mass;
    Temperature teff;
    Length radius;
    std::shared_ptr<const Spectrum> spectrum;
};

// IAU 2015 B3 nominal Sun, Planck spectrum at 5772 K.
Star sun();

// What a user may give for a custom star. Mass is required; of luminosity, teff and radius
// at least two; the third follows from Stefan-Boltzmann, L = 4 pi R^2 sigma T^4. If all three
// are given they must agree within `stefan_boltzmann_tolerance` (relative, in L).
// spectrum: null means a Planck curve at teff.
struct StarInputs {
    std::string name = "custom star";
    std::optional<Power> luminosity; // --luminosity
    std::optional<Mass> mass;        // --mass
    std::optional<Temperature> teff; // --teff
    std::optional<Length> radius;    // --star-radius
    std::shared_ptr<const Spectrum> spectrum;
};
inline constexpr double stefan_boltzmann_tolerance = 0.01;

// Builds the star, filling the missing one of L, T, R. Throws InputError naming the options
// (--luminosity, --mass, --teff, --star-radius): a missing mass, fewer than two of L/T/R, a
// value that is not finite and > 0, or three that disagree by more than 1% (the message
// shows the given L and 4 pi R^2 sigma T^4).
Star custom_star(const StarInputs& inputs);

// Stefan-Boltzmann relations, each the inverse of the others.
Power stefan_boltzmann_luminosity(Length radius, Temperature teff);
Temperature stefan_boltzmann_teff(Power luminosity, Length radius);
Length stefan_boltzmann_radius(Power luminosity, Temperature teff);

} // namespace holdfast
