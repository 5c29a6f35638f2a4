#pragma once
// Grain materials: optical constants versus wavelength, bulk density, and effective-medium
// mixing (porosity as vacuum inclusions, mixtures of components).
#include <complex>
#include <limits>
#include <memory>
#include <span>
#include <string>
#include <vector>

#include "holdfast/units.hpp"

namespace holdfast {

// Complex refractive index m = n + ik (k >= 0) as a function of vacuum wavelength.
class OpticalConstants {
  public:
    virtual ~OpticalConstants() = default;
    // Plain double in micrometres: this sits inside the spectral quadrature.
    virtual std::complex<double> index_at_um(double wavelength_um) const = 0;
    // Wavelength range where the data are defined, in micrometres.
    virtual double min_wavelength_um() const { return 0.0; }
    virtual double max_wavelength_um() const { return std::numeric_limits<double>::infinity(); }
    // One line for people: what this is and where its numbers come from.
    virtual std::string describe() const = 0;
};

// The same index at every wavelength.
std::shared_ptr<const OpticalConstants> constant_index(std::complex<double> m);

// ---- effective-medium mixing -----------------------------------------------------------------
// Relative permittivity from an index and back (the root with k >= 0).
std::complex<double> permittivity_from_index(std::complex<double> m);
std::complex<double> index_from_permittivity(std::complex<double> eps);

// Bruggeman (1935): sum_i f_i (eps_i - eps) / (eps_i + 2 eps) = 0 for any number of
// components with volume fractions f_i summing to 1. Symmetric in its components.
std::complex<double> bruggeman_permittivity(std::span<const std::complex<double>> eps,
                                            std::span<const double> volume_fractions);

// Maxwell Garnett (1904): inclusions of eps_inclusion at volume fraction f in a matrix.
std::complex<double> maxwell_garnett_permittivity(std::complex<double> eps_matrix,
                                                  std::complex<double> eps_inclusion,
                                                  double inclusion_fraction);

enum class MixingRule { bruggeman, maxwell_garnett };

struct MixtureComponent {
    std::shared_ptr<const OpticalConstants> optics;
    double volume_fraction = 0.0;
};

// A mixture evaluated wavelength by wavelength. For Maxwell Garnett the first component is
// the matrix and the others are inclusions (mixed among themselves by Bruggeman first).
// Fractions must be in [0, 1] and sum to 1 within 1e-9; throws InputError otherwise.
std::shared_ptr<const OpticalConstants> mixture(std::vector<MixtureComponent> components,
                                                MixingRule rule);

// Porosity P as vacuum inclusions (m = 1) at volume fraction P, by `rule`. P = 0 gives the
// material back unchanged; P must be in [0, 1).
std::shared_ptr<const OpticalConstants> with_porosity(std::shared_ptr<const OpticalConstants> solid,
                                                      double porosity, MixingRule rule);

} // namespace holdfast
