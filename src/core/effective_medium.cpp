// Effective-medium mixing: the permittivity of a mixture from those of its components.
//
// References
//  - D. A. G. Bruggeman (1935), Ann. Phys. 416, 636: sum_i f_i (eps_i - eps)/(eps_i + 2 eps) = 0.
//  - J. C. Maxwell Garnett (1904), Phil. Trans. R. Soc. A 203, 385; in the form of
//    C. F. Bohren & D. R. Huffman (1983), Wiley, eq. (8.50):
//    eps = eps_m [eps_i + 2 eps_m + 2 f (eps_i - eps_m)] / [eps_i + 2 eps_m - f (eps_i - eps_m)].
//
// Bruggeman for N components. Clearing the denominators turns the condition into a
// polynomial of degree N in eps,
//   P(eps) = sum_i f_i (eps_i - eps) prod_{j != i} (eps_j + 2 eps),
// whose N roots are found together by the Durand-Kerner (Weierstrass) iteration and then
// polished by Newton's method on the original sum. Of the roots, the physical one has
// Im(eps) >= 0 (a passive medium); when several qualify (lossless components give real
// roots), the one nearest the volume-weighted mean sum_i f_i eps_i is taken, which for
// positive real eps_i is the positive root. Identical components are merged and empty ones
// dropped first, so the polynomial has no spurious root at eps = -eps_i / 2. The result does
// not depend on the order of the components (tests/effective_medium_test.cpp).
#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <numeric>

#include "holdfast/errors.hpp"
#include "holdfast/material.hpp"

namespace holdfast {
namespace {

using cplx = std::complex<double>;

// Enough for any mixture a person writes down; keeps the mixing free of heap allocation.
constexpr std::size_t max_components = 16;

void check_fractions(std::span<const double> f, std::string_view who) {
    double sum = 0.0;
    for (double v : f) {
        if (!std::isfinite(v) || v < 0.0 || v > 1.0)
            throw InputError(std::string(who) + ": volume fraction " + std::to_string(v) +
                             " is outside [0, 1]");
        sum += v;
    }
    if (std::abs(sum - 1.0) > 1e-9)
        throw InputError(std::string(who) + ": volume fractions sum to " + std::to_string(sum) +
                         ", not 1 (within 1e-9)");
}

void check_permittivity(cplx eps, std::string_view who) {
    if (!std::isfinite(eps.real()) || !std::isfinite(eps.imag()) ||
        eps.imag() < -1e-12 * std::abs(eps))
        throw InputError(std::string(who) +
                         ": a permittivity must be finite with Im(eps) >= 0 (passive medium)");
}

cplx bruggeman_sum(const cplx* eps, const double* f, std::size_t n, cplx e) {
    cplx s(0.0, 0.0);
    for (std::size_t i = 0; i < n; ++i)
        s += f[i] * (eps[i] - e) / (eps[i] + 2.0 * e);
    return s;
}

cplx bruggeman_slope(const cplx* eps, const double* f, std::size_t n, cplx e) {
    cplx s(0.0, 0.0);
    for (std::size_t i = 0; i < n; ++i) {
        const cplx d = eps[i] + 2.0 * e;
        s -= 3.0 * f[i] * eps[i] / (d * d);
    }
    return s;
}

} // namespace

std::complex<double> permittivity_from_index(std::complex<double> m) { return m * m; }

std::complex<double> index_from_permittivity(std::complex<double> eps) {
    check_permittivity(eps, "index_from_permittivity");
    // The principal square root has Re >= 0 and, for Im(eps) >= 0, Im >= 0: the absorbing
    // branch. A rounding-level negative Im(eps) (or -0.0) would flip it, so clear it first.
    const cplx m = std::sqrt(cplx(eps.real(), eps.imag() > 0.0 ? eps.imag() : 0.0));
    return {m.real(), std::max(m.imag(), 0.0)};
}

std::complex<double> bruggeman_permittivity(std::span<const std::complex<double>> eps,
                                            std::span<const double> volume_fractions) {
    constexpr std::string_view who = "bruggeman_permittivity";
    if (eps.empty() || eps.size() != volume_fractions.size())
        throw InputError(std::string(who) +
                         ": needs one volume fraction per component and at least one component");
    if (eps.size() > max_components)
        throw InputError(std::string(who) + ": at most " + std::to_string(max_components) +
                         " components");
    check_fractions(volume_fractions, who);
    for (cplx e : eps)
        check_permittivity(e, who);

    // Merge identical components, drop empty ones.
    std::array<cplx, max_components> e{};
    std::array<double, max_components> f{};
    std::size_t n = 0;
    for (std::size_t i = 0; i < eps.size(); ++i) {
        if (volume_fractions[i] == 0.0) continue;
        std::size_t j = 0;
        while (j < n && e[j] != eps[i])
            ++j;
        if (j == n) {
            e[n] = eps[i];
            f[n] = 0.0;
            ++n;
        }
        f[j] += volume_fractions[i];
    }
    if (n == 1) return e[0];

    // Coefficients of P(eps), lowest power first.
    std::array<cplx, max_components + 1> c{};
    for (std::size_t i = 0; i < n; ++i) {
        std::array<cplx, max_components + 1> term{};
        term[0] = f[i] * e[i];
        term[1] = -f[i];
        std::size_t degree = 1;
        for (std::size_t j = 0; j < n; ++j) {
            if (j == i) continue;
            // multiply by (e_j + 2 eps)
            for (std::size_t k = degree + 2; k-- > 0;) {
                const cplx lower = k > 0 ? term[k - 1] : cplx(0.0, 0.0);
                term[k] = term[k] * e[j] + 2.0 * lower;
            }
            ++degree;
        }
        for (std::size_t k = 0; k <= n; ++k)
            c[k] += term[k];
    }
    const std::size_t degree = n;
    const cplx lead = c[degree];
    double radius = 0.0;
    for (std::size_t k = 0; k < degree; ++k)
        radius = std::max(radius, std::abs(c[k] / lead));
    radius += 1.0; // every root lies within this circle (Cauchy's bound)

    // Durand-Kerner: all roots at once from points spread round a circle.
    std::array<cplx, max_components> root{};
    const cplx seed(0.4, 0.9);
    cplx power(1.0, 0.0);
    for (std::size_t k = 0; k < degree; ++k) {
        root[k] = radius * power / std::abs(power);
        power *= seed;
    }
    bool converged = false;
    for (int iter = 0; iter < 2000 && !converged; ++iter) {
        converged = true;
        for (std::size_t k = 0; k < degree; ++k) {
            cplx value = c[degree];
            for (std::size_t p = degree; p-- > 0;)
                value = value * root[k] + c[p];
            cplx den = lead;
            for (std::size_t j = 0; j < degree; ++j)
                if (j != k) den *= root[k] - root[j];
            const cplx step = value / den;
            root[k] -= step;
            if (!(std::abs(step) <= 1e-15 * std::max(1.0, std::abs(root[k])))) converged = false;
        }
    }
    for (std::size_t k = 0; k < degree; ++k)
        if (!std::isfinite(root[k].real()) || !std::isfinite(root[k].imag()))
            throw NumericalError("Bruggeman mixing: the root search gave a non-finite value");

    // Choose the physical root, then polish it on the original equation.
    cplx mean(0.0, 0.0);
    for (std::size_t i = 0; i < n; ++i)
        mean += f[i] * e[i];
    double scale = 0.0;
    for (std::size_t i = 0; i < n; ++i)
        scale = std::max(scale, std::abs(e[i]));
    std::size_t best = degree;
    for (std::size_t k = 0; k < degree; ++k) {
        if (root[k].imag() < -1e-9 * scale) continue;
        if (best == degree || std::abs(root[k] - mean) < std::abs(root[best] - mean)) best = k;
    }
    if (best == degree)
        throw NumericalError("Bruggeman mixing: no root with Im(eps) >= 0 was found");
    cplx result = root[best];
    for (int iter = 0; iter < 4; ++iter) {
        const cplx slope = bruggeman_slope(e.data(), f.data(), n, result);
        if (slope == cplx(0.0, 0.0)) break;
        result -= bruggeman_sum(e.data(), f.data(), n, result) / slope;
    }
    const cplx residual = bruggeman_sum(e.data(), f.data(), n, result);
    if (!std::isfinite(result.real()) || !std::isfinite(result.imag()) || std::abs(residual) > 1e-8)
        throw NumericalError("Bruggeman mixing did not converge (residual " +
                             std::to_string(std::abs(residual)) + ")");
    if (result.imag() < 0.0) result.imag(0.0); // rounding below zero for lossless components
    return result;
}

std::complex<double> maxwell_garnett_permittivity(std::complex<double> eps_matrix,
                                                  std::complex<double> eps_inclusion,
                                                  double inclusion_fraction) {
    constexpr std::string_view who = "maxwell_garnett_permittivity";
    check_permittivity(eps_matrix, who);
    check_permittivity(eps_inclusion, who);
    if (!std::isfinite(inclusion_fraction) || inclusion_fraction < 0.0 || inclusion_fraction > 1.0)
        throw InputError(std::string(who) + ": inclusion fraction " +
                         std::to_string(inclusion_fraction) + " is outside [0, 1]");
    const cplx diff = eps_inclusion - eps_matrix;
    const cplx sum = eps_inclusion + 2.0 * eps_matrix;
    // Bohren & Huffman (1983) eq. (8.50).
    return eps_matrix * (sum + 2.0 * inclusion_fraction * diff) / (sum - inclusion_fraction * diff);
}

namespace {

std::string rule_name(MixingRule rule) {
    return rule == MixingRule::bruggeman ? "Bruggeman" : "Maxwell Garnett";
}

class Mixture final : public OpticalConstants {
  public:
    Mixture(std::vector<MixtureComponent> components, MixingRule rule)
        : components_(std::move(components)), rule_(rule) {}

    std::complex<double> index_at_um(double wavelength_um) const override {
        std::array<cplx, max_components> eps{};
        std::array<double, max_components> f{};
        const std::size_t n = components_.size();
        for (std::size_t i = 0; i < n; ++i) {
            eps[i] = permittivity_from_index(components_[i].optics->index_at_um(wavelength_um));
            f[i] = components_[i].volume_fraction;
        }
        if (rule_ == MixingRule::bruggeman)
            return index_from_permittivity(
                bruggeman_permittivity(std::span(eps.data(), n), std::span(f.data(), n)));
        // Maxwell Garnett: component 0 is the matrix; the inclusions are first mixed among
        // themselves (Bruggeman, fractions renormalised) into one inclusion medium.
        double f_inclusions = 0.0;
        for (std::size_t i = 1; i < n; ++i)
            f_inclusions += f[i];
        if (n == 1 || f_inclusions == 0.0) return index_from_permittivity(eps[0]);
        cplx eps_inclusion = eps[1];
        if (n > 2) {
            std::array<double, max_components> g{};
            double sum = 0.0;
            for (std::size_t i = 1; i < n; ++i)
                sum += f[i];
            for (std::size_t i = 1; i < n; ++i)
                g[i - 1] = f[i] / sum;
            eps_inclusion = bruggeman_permittivity(std::span(eps.data() + 1, n - 1),
                                                   std::span(g.data(), n - 1));
        }
        return index_from_permittivity(
            maxwell_garnett_permittivity(eps[0], eps_inclusion, std::min(1.0, f_inclusions)));
    }

    double min_wavelength_um() const override {
        double v = 0.0;
        for (const auto& c : components_)
            v = std::max(v, c.optics->min_wavelength_um());
        return v;
    }
    double max_wavelength_um() const override {
        double v = std::numeric_limits<double>::infinity();
        for (const auto& c : components_)
            v = std::min(v, c.optics->max_wavelength_um());
        return v;
    }
    std::string describe() const override {
        std::string s = rule_name(rule_) + " mixture of ";
        for (std::size_t i = 0; i < components_.size(); ++i) {
            char buf[32];
            std::snprintf(buf, sizeof buf, "%.4g", components_[i].volume_fraction);
            if (i > 0) s += " + ";
            s += std::string(buf) + " x (" + components_[i].optics->describe() + ")";
            if (rule_ == MixingRule::maxwell_garnett && i == 0) s += " [matrix]";
        }
        return s;
    }

  private:
    std::vector<MixtureComponent> components_;
    MixingRule rule_;
};

} // namespace

std::shared_ptr<const OpticalConstants> mixture(std::vector<MixtureComponent> components,
                                                MixingRule rule) {
    constexpr std::string_view who = "mixture";
    if (components.empty()) throw InputError(std::string(who) + ": no components given");
    if (components.size() > max_components)
        throw InputError(std::string(who) + ": at most " + std::to_string(max_components) +
                         " components");
    std::array<double, max_components> f{};
    for (std::size_t i = 0; i < components.size(); ++i) {
        if (!components[i].optics)
            throw InputError(std::string(who) + ": component " + std::to_string(i + 1) +
                             " has no optical constants");
        f[i] = components[i].volume_fraction;
    }
    check_fractions(std::span(f.data(), components.size()), who);
    double lo = 0.0;
    double hi = std::numeric_limits<double>::infinity();
    for (const auto& c : components) {
        lo = std::max(lo, c.optics->min_wavelength_um());
        hi = std::min(hi, c.optics->max_wavelength_um());
    }
    if (!(lo <= hi))
        throw InputError(std::string(who) + ": the components' wavelength ranges do not overlap");
    return std::make_shared<const Mixture>(std::move(components), rule);
}

std::shared_ptr<const OpticalConstants> with_porosity(std::shared_ptr<const OpticalConstants> solid,
                                                      double porosity, MixingRule rule) {
    if (!solid) throw InputError("with_porosity: no solid material given");
    if (!std::isfinite(porosity) || porosity < 0.0 || porosity >= 1.0)
        throw InputError("with_porosity: porosity " + std::to_string(porosity) +
                         " is outside [0, 1)");
    if (porosity == 0.0) return solid;
    // Vacuum inclusions (m = 1) in the solid; for Maxwell Garnett the solid is the matrix.
    return mixture({{std::move(solid), 1.0 - porosity}, {constant_index({1.0, 0.0}), porosity}},
                   rule);
}

} // namespace holdfast
