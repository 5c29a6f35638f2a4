#pragma once
// The star: luminosity, mass, effective temperature, radius and the shape of its spectrum.
#include <memory>
#include <optional>
#include <string>

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
};

// Planck B_lambda(T) as the spectrum shape.
std::shared_ptr<const Spectrum> planck_spectrum(Temperature teff);

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

} // namespace holdfast
