// The simplest optical-constants source: one refractive index at every wavelength.
#include <cmath>
#include <cstdio>

#include "holdfast/errors.hpp"
#include "holdfast/material.hpp"

namespace holdfast {
namespace {

class ConstantIndex final : public OpticalConstants {
  public:
    explicit ConstantIndex(std::complex<double> m) : m_(m) {}
    std::complex<double> index_at_um(double /*wavelength_um*/) const override { return m_; }
    std::string describe() const override {
        char buf[96];
        std::snprintf(buf, sizeof buf, "constant refractive index %.6g%+.6gi", m_.real(),
                      m_.imag());
        return buf;
    }

  private:
    std::complex<double> m_;
};

} // namespace

std::shared_ptr<const OpticalConstants> constant_index(std::complex<double> m) {
    if (!std::isfinite(m.real()) || !std::isfinite(m.imag()) || !(m.real() > 0.0) ||
        m.imag() < 0.0) {
        char buf[160];
        std::snprintf(buf, sizeof buf,
                      "constant_index: cannot use m = %g%+gi. Accepted: finite n > 0 and k >= 0",
                      m.real(), m.imag());
        throw InputError(buf);
    }
    return std::make_shared<const ConstantIndex>(m);
}

} // namespace holdfast
