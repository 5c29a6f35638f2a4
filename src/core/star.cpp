// The star and the shape of its spectrum.
//
// References:
//   M. Planck (1901), Ann. Phys. 309, 553: B_lambda(T) = 2 h c^2 / lambda^5 / (exp(hc/lambda k T) -
//   1). W. K. Widger & M. P. Woodall (1976), Bull. Am. Meteorol. Soc. 57, 1217: series for the
//     fraction of blackbody radiation below a wavelength (the exponential series for x >= 2
//     and the Bernoulli-number power series for x < 2, x = hc / lambda k T).
//   IAU 2015 Resolution B3: nominal solar luminosity, radius, effective temperature and GM.
#include "holdfast/star.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <numbers>
#include <sstream>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>

#include "holdfast/errors.hpp"
#include "text_table.hpp"

namespace holdfast {
namespace {

using constants::boltzmann_J_K;
using constants::planck_J_s;
using constants::speed_of_light_m_s;
using constants::stefan_boltzmann_SI;

// Second radiation constant c2 = h c / k, in um K (CODATA 2018 exact constants).
constexpr double c2_um_K = planck_J_s * speed_of_light_m_s / boltzmann_J_K * 1e6;
// First radiation constant for spectral radiance, 2 h c^2, in W m^2 sr^-1.
constexpr double c1L_W_m2 = 2.0 * planck_J_s * speed_of_light_m_s * speed_of_light_m_s;
// int_0^inf t^3 / (e^t - 1) dt = pi^4 / 15.
constexpr double planck_integral =
    std::numbers::pi * std::numbers::pi * std::numbers::pi * std::numbers::pi / 15.0;

// G(x) = int_x^inf t^3 / (e^t - 1) dt = sum_n e^{-nx} / n (x^3 + 3x^2/n + 6x/n^2 + 6/n^3)
// (Widger & Woodall 1976, eq. 1 rearranged). Used for x >= 2, where it needs < 25 terms.
double planck_upper_integral(double x) {
    double sum = 0.0;
    for (int n = 1; n < 10000; ++n) {
        const double dn = n;
        const double term =
            std::exp(-dn * x) / dn *
            (x * x * x + 3.0 * x * x / dn + 6.0 * x / (dn * dn) + 6.0 / (dn * dn * dn));
        sum += term;
        if (term <= 1e-17 * sum) break;
    }
    return sum;
}

// Coefficients a_j = B_j / j! of t / (e^t - 1) = sum_j a_j t^j (B_j Bernoulli numbers), from
// the recurrence sum_{k=0}^{j} a_k / (j + 1 - k)! = 0 (j >= 1), a_0 = 1; long double keeps the
// mild cancellation of the recurrence below 1e-15 for the 40 terms used.
constexpr int bernoulli_terms = 40;
std::array<double, bernoulli_terms> bernoulli_over_factorial() {
    std::array<long double, bernoulli_terms + 2> inv_factorial{};
    inv_factorial[0] = 1.0L;
    for (int j = 1; j < bernoulli_terms + 2; ++j)
        inv_factorial[j] = inv_factorial[j - 1] / static_cast<long double>(j);
    std::array<long double, bernoulli_terms> a{};
    a[0] = 1.0L;
    for (int j = 1; j < bernoulli_terms; ++j) {
        long double s = 0.0L;
        for (int k = 0; k < j; ++k)
            s += a[k] * inv_factorial[j + 1 - k];
        a[j] = -s;
    }
    std::array<double, bernoulli_terms> out{};
    for (int j = 0; j < bernoulli_terms; ++j)
        out[j] = static_cast<double>(a[j]);
    return out;
}

// L(x) = int_0^x t^3 / (e^t - 1) dt = sum_j a_j x^(j+3) / (j+3) (Widger & Woodall 1976,
// eq. 2). Converges for x < 2 pi; used for x < 2, where 40 terms reach (1/pi)^40 ~ 1e-20.
double planck_lower_integral(double x) {
    static const std::array<double, bernoulli_terms> a = bernoulli_over_factorial();
    double sum = 0.0;
    double power = x * x * x;
    for (int j = 0; j < bernoulli_terms; ++j) {
        sum += a[j] * power / (j + 3);
        power *= x;
    }
    return sum;
}

void require_positive_temperature(double temperature_K, const char* what) {
    if (!(std::isfinite(temperature_K) && temperature_K > 0.0))
        throw InputError(std::string(what) + ": the temperature must be finite and > 0 K, got " +
                         detail::num(temperature_K) + " K");
}

class PlanckSpectrum final : public Spectrum {
  public:
    explicit PlanckSpectrum(double temperature_K) : temperature_K_(temperature_K) {}
    double f_lambda_shape(double wavelength_um) const override {
        return planck_b_lambda_W_m2_sr_um(wavelength_um, temperature_K_);
    }
    double min_wavelength_um() const override { return 0.0; }
    double max_wavelength_um() const override { return std::numeric_limits<double>::infinity(); }
    std::string describe() const override {
        return "Planck B_lambda at " + detail::num(temperature_K_) + " K";
    }
    double flux_fraction_below(double wavelength_um) const override {
        return blackbody_fraction_below(wavelength_um, temperature_K_);
    }

  private:
    double temperature_K_;
};

// Power-law segments between rows (linear in log-log). A power law is what stellar spectra
// look like over short stretches (Rayleigh-Jeans tail ~ lambda^-4, Wien side ~ steep), so
// log-log interpolation follows them with coarse tables and never produces negative flux,
// where linear interpolation would bow between widely spaced rows.
class TabulatedSpectrum final : public Spectrum {
  public:
    TabulatedSpectrum(std::vector<double> wavelength_um, std::vector<double> f_lambda,
                      std::string description)
        : wl_(std::move(wavelength_um)), f_(std::move(f_lambda)),
          description_(std::move(description)) {
        cumulative_.assign(wl_.size(), 0.0);
        for (std::size_t i = 0; i + 1 < wl_.size(); ++i)
            cumulative_[i + 1] = cumulative_[i] + segment_integral(i, wl_[i + 1]);
    }
    double f_lambda_shape(double wavelength_um) const override {
        if (!(wavelength_um >= wl_.front() && wavelength_um <= wl_.back())) return 0.0;
        const std::size_t i = segment(wavelength_um);
        const double f0 = f_[i], f1 = f_[i + 1];
        if (f0 > 0.0 && f1 > 0.0) {
            const double t = std::log(wavelength_um / wl_[i]) / std::log(wl_[i + 1] / wl_[i]);
            return f0 * std::pow(f1 / f0, t);
        }
        const double t = (wavelength_um - wl_[i]) / (wl_[i + 1] - wl_[i]);
        return f0 + (f1 - f0) * t;
    }
    double min_wavelength_um() const override { return wl_.front(); }
    double max_wavelength_um() const override { return wl_.back(); }
    std::string describe() const override { return description_; }
    double flux_fraction_below(double wavelength_um) const override {
        if (!(wavelength_um > wl_.front())) return 0.0;
        if (wavelength_um >= wl_.back()) return 1.0;
        const std::size_t i = segment(wavelength_um);
        return (cumulative_[i] + segment_integral(i, wavelength_um)) / cumulative_.back();
    }

  private:
    std::vector<double> wl_, f_, cumulative_;
    std::string description_;

    // Index i with wl_[i] <= wavelength < wl_[i+1] (the last segment for the last row).
    std::size_t segment(double wavelength_um) const {
        const auto it = std::upper_bound(wl_.begin(), wl_.end(), wavelength_um);
        const auto i = static_cast<std::size_t>(it - wl_.begin());
        return std::min(i == 0 ? 0 : i - 1, wl_.size() - 2);
    }
    // int_{wl_[i]}^{upper} F dlambda on segment i, exact for the interpolant.
    double segment_integral(std::size_t i, double upper_um) const {
        const double f0 = f_[i], f1 = f_[i + 1], l0 = wl_[i], l1 = wl_[i + 1];
        if (f0 > 0.0 && f1 > 0.0) {
            // F = f0 (l/l0)^p; int = f0 l0 (exp(q u) - 1) / q with q = p + 1, u = ln(l/l0).
            const double p = std::log(f1 / f0) / std::log(l1 / l0);
            const double u = std::log(upper_um / l0);
            const double qu = (p + 1.0) * u;
            const double ratio = std::abs(qu) < 1e-8 ? 1.0 + 0.5 * qu : std::expm1(qu) / qu;
            return f0 * l0 * u * ratio;
        }
        const double f_upper = f0 + (f1 - f0) * (upper_um - l0) / (l1 - l0);
        return 0.5 * (f0 + f_upper) * (upper_um - l0);
    }
};

// Integrand for the default flux_fraction_below: F(e^u) e^u in u = ln(lambda).
struct LogIntegrand {
    const Spectrum* spectrum;
};
double log_integrand(double u, void* params) {
    const auto* p = static_cast<const LogIntegrand*>(params);
    const double wavelength_um = std::exp(u);
    return p->spectrum->f_lambda_shape(wavelength_um) * wavelength_um;
}

double integrate_log(const Spectrum& s, double low_um, double high_um) {
    LogIntegrand params{&s};
    gsl_function f{&log_integrand, &params};
    gsl_integration_workspace* w = gsl_integration_workspace_alloc(1000);
    if (w == nullptr) throw NumericalError("flux fraction: cannot allocate GSL workspace");
    double result = 0.0, abserr = 0.0;
    int status = 0;
    const bool low_open = !(low_um > 0.0), high_open = !std::isfinite(high_um);
    if (low_open && high_open)
        status = gsl_integration_qagi(&f, 0.0, 1e-10, 1000, w, &result, &abserr);
    else if (low_open)
        status =
            gsl_integration_qagil(&f, std::log(high_um), 0.0, 1e-10, 1000, w, &result, &abserr);
    else if (high_open)
        status = gsl_integration_qagiu(&f, std::log(low_um), 0.0, 1e-10, 1000, w, &result, &abserr);
    else
        status = gsl_integration_qags(&f, std::log(low_um), std::log(high_um), 0.0, 1e-10, 1000, w,
                                      &result, &abserr);
    gsl_integration_workspace_free(w);
    if (status != GSL_SUCCESS || !std::isfinite(result))
        throw NumericalError("flux fraction of spectrum '" + s.describe() + "' between " +
                             detail::num(low_um) + " and " + detail::num(high_um) +
                             " um: GSL quadrature failed (" + gsl_strerror(status) + ")");
    return result;
}

std::string format_lsun(double watts) {
    return detail::num(watts) + " W (" + detail::num(watts / constants::solar_luminosity_W) +
           " Lsun)";
}

} // namespace

double Spectrum::flux_fraction_below(double wavelength_um) const {
    const double low = min_wavelength_um(), high = max_wavelength_um();
    if (!(wavelength_um > low)) return 0.0;
    if (wavelength_um >= high) return 1.0;
    const double total = integrate_log(*this, low, high);
    if (!(total > 0.0))
        throw NumericalError("flux fraction: spectrum '" + describe() + "' has no flux");
    return integrate_log(*this, low, wavelength_um) / total;
}

double planck_b_lambda_W_m2_sr_um(double wavelength_um, double temperature_K) {
    if (!(wavelength_um > 0.0) || !(temperature_K > 0.0)) return 0.0;
    const double x = c2_um_K / (wavelength_um * temperature_K);
    const double wavelength_m = wavelength_um * 1e-6;
    const double l5 = wavelength_m * wavelength_m * wavelength_m * wavelength_m * wavelength_m;
    // 2hc^2/lambda^5 in W m^-2 sr^-1 m^-1; * 1e-6 for per micrometre.
    const double prefactor = c1L_W_m2 / l5 * 1e-6;
    // Wien side: exp(x) would overflow past x ~ 709; exp(-x) / (1 - exp(-x)) is the same
    // quantity and underflows gracefully to 0. expm1 keeps the Rayleigh-Jeans side exact.
    if (x > 50.0) return prefactor * std::exp(-x) / (1.0 - std::exp(-x));
    return prefactor / std::expm1(x);
}

double blackbody_fraction_below(double wavelength_um, double temperature_K) {
    require_positive_temperature(temperature_K, "blackbody fraction");
    if (!(wavelength_um > 0.0)) return 0.0;
    if (std::isinf(wavelength_um)) return 1.0;
    const double x = c2_um_K / (wavelength_um * temperature_K);
    if (x >= 2.0) return planck_upper_integral(x) / planck_integral;
    return 1.0 - planck_lower_integral(x) / planck_integral;
}

double blackbody_fraction_above(double wavelength_um, double temperature_K) {
    require_positive_temperature(temperature_K, "blackbody fraction");
    if (!(wavelength_um > 0.0)) return 1.0;
    if (std::isinf(wavelength_um)) return 0.0;
    const double x = c2_um_K / (wavelength_um * temperature_K);
    if (x >= 2.0) return 1.0 - planck_upper_integral(x) / planck_integral;
    return planck_lower_integral(x) / planck_integral;
}

double blackbody_flux_fraction_outside(double low_um, double high_um, double temperature_K) {
    return blackbody_fraction_below(low_um, temperature_K) +
           blackbody_fraction_above(high_um, temperature_K);
}

std::shared_ptr<const Spectrum> planck_spectrum(Temperature teff) {
    require_positive_temperature(teff.value(), "Planck spectrum");
    return std::make_shared<PlanckSpectrum>(teff.value());
}

std::shared_ptr<const Spectrum> tabulated_spectrum(std::vector<double> wavelength_um,
                                                   std::vector<double> f_lambda,
                                                   std::string description) {
    auto fail = [&](std::size_t row, const std::string& why) {
        throw InputError("spectrum '" + description + "', row " + std::to_string(row + 1) + ": " +
                         why);
    };
    if (wavelength_um.size() != f_lambda.size())
        throw InputError("spectrum '" + description + "': " + std::to_string(wavelength_um.size()) +
                         " wavelengths but " + std::to_string(f_lambda.size()) +
                         " F_lambda values");
    if (wavelength_um.size() < minimum_spectrum_rows)
        throw InputError("spectrum '" + description + "': " + std::to_string(wavelength_um.size()) +
                         " rows; at least " + std::to_string(minimum_spectrum_rows) +
                         " are needed");
    bool any_flux = false;
    for (std::size_t i = 0; i < wavelength_um.size(); ++i) {
        if (!std::isfinite(wavelength_um[i]) || !std::isfinite(f_lambda[i]))
            fail(i, "a value is not finite");
        if (!(wavelength_um[i] > 0.0))
            fail(i, "wavelength " + detail::num(wavelength_um[i]) + " is not > 0");
        if (f_lambda[i] < 0.0) fail(i, "F_lambda " + detail::num(f_lambda[i]) + " is negative");
        if (i > 0 && wavelength_um[i] == wavelength_um[i - 1])
            fail(i, "wavelength " + detail::num(wavelength_um[i]) + " um repeats the previous row");
        if (i > 0 && wavelength_um[i] < wavelength_um[i - 1])
            fail(i, "wavelength " + detail::num(wavelength_um[i]) +
                        " um is below the previous row's " + detail::num(wavelength_um[i - 1]) +
                        " um; rows must be sorted by increasing wavelength");
        any_flux = any_flux || f_lambda[i] > 0.0;
    }
    if (!any_flux) throw InputError("spectrum '" + description + "': F_lambda is 0 everywhere");
    return std::make_shared<TabulatedSpectrum>(std::move(wavelength_um), std::move(f_lambda),
                                               std::move(description));
}

std::shared_ptr<const Spectrum> read_spectrum_file(const std::string& path,
                                                   Length wavelength_unit) {
    const double to_um = in_micrometres(wavelength_unit);
    if (!(std::isfinite(to_um) && to_um > 0.0))
        throw InputError(path + ": the wavelength unit must be a positive length");
    const std::string text = detail::read_text_file(path);
    const auto rows = detail::read_numeric_rows(text, path, 2, {"wavelength", "F_lambda"});
    if (rows.size() < minimum_spectrum_rows)
        detail::data_file_error(
            path, std::to_string(rows.size()) + " data rows; a spectrum needs at least " +
                      std::to_string(minimum_spectrum_rows) + " (wavelength F_lambda per line)");
    std::vector<double> wl, f;
    for (std::size_t i = 0; i < rows.size(); ++i) {
        const double w = rows[i].values[0] * to_um, v = rows[i].values[1];
        const std::size_t line = rows[i].line;
        if (!(w > 0.0))
            detail::data_file_error(path, line,
                                    "wavelength " + detail::num(rows[i].values[0]) + " is not > 0");
        if (v < 0.0)
            detail::data_file_error(path, line, "F_lambda " + detail::num(v) + " is negative");
        if (!std::isfinite(w))
            detail::data_file_error(path, line, "the wavelength overflows on conversion to um");
        if (!wl.empty() && w == wl.back())
            detail::data_file_error(path, line,
                                    "wavelength " + detail::num(rows[i].values[0]) +
                                        " repeats line " + std::to_string(rows[i - 1].line) +
                                        " (duplicate wavelength)");
        if (!wl.empty() && w < wl.back())
            detail::data_file_error(path, line,
                                    "wavelength " + detail::num(rows[i].values[0]) + " is below " +
                                        detail::num(rows[i - 1].values[0]) + " on line " +
                                        std::to_string(rows[i - 1].line) +
                                        "; rows must be sorted by increasing wavelength");
        wl.push_back(w);
        f.push_back(v);
    }
    if (std::none_of(f.begin(), f.end(), [](double v) { return v > 0.0; }))
        detail::data_file_error(path, "F_lambda is 0 on every line");
    return tabulated_spectrum(std::move(wl), std::move(f),
                              "tabulated spectrum " + path + " (" + std::to_string(rows.size()) +
                                  " rows, " + detail::num(wl.front()) + "-" +
                                  detail::num(wl.back()) + " um)");
}

Power stefan_boltzmann_luminosity(Length radius, Temperature teff) {
    const double r = radius.value(), t = teff.value();
    return watts(4.0 * std::numbers::pi * r * r * stefan_boltzmann_SI * t * t * t * t);
}

Temperature stefan_boltzmann_teff(Power luminosity, Length radius) {
    const double r = radius.value();
    return kelvin(std::pow(
        luminosity.value() / (4.0 * std::numbers::pi * r * r * stefan_boltzmann_SI), 0.25));
}

Length stefan_boltzmann_radius(Power luminosity, Temperature teff) {
    const double t = teff.value();
    return metres(std::sqrt(luminosity.value() /
                            (4.0 * std::numbers::pi * stefan_boltzmann_SI * t * t * t * t)));
}

Star sun() {
    Star s;
    s.name = "Sun (IAU 2015 B3 nominal)";
    s.luminosity = watts(constants::solar_luminosity_W);
    s.mass = kilograms(constants::solar_mass_kg);
    s.teff = kelvin(constants::solar_teff_K);
    s.radius = metres(constants::solar_radius_m);
    s.spectrum = planck_spectrum(s.teff);
    return s;
}

Star custom_star(const StarInputs& in) {
    auto check = [](const auto& q, const char* option, const char* unit) {
        if (q && !(std::isfinite(q->value()) && q->value() > 0.0))
            throw InputError(std::string(option) + ": must be finite and > 0, got " +
                             detail::num(q->value()) + " " + unit);
    };
    check(in.mass, "--mass", "kg");
    check(in.luminosity, "--luminosity", "W");
    check(in.teff, "--teff", "K");
    check(in.radius, "--star-radius", "m");
    if (!in.mass)
        throw InputError("a custom star needs --mass (for example --mass 1.2 Msun); it sets "
                         "gravity, which no spectrum can tell");
    const int given =
        int(in.luminosity.has_value()) + int(in.teff.has_value()) + int(in.radius.has_value());
    if (given < 2) {
        std::string missing;
        for (auto [has, name] : {std::pair{in.luminosity.has_value(), "--luminosity"},
                                 std::pair{in.teff.has_value(), "--teff"},
                                 std::pair{in.radius.has_value(), "--star-radius"}})
            if (!has) missing += (missing.empty() ? "" : ", ") + std::string(name);
        throw InputError("a custom star needs two of --luminosity, --teff and --star-radius "
                         "(the third follows from L = 4 pi R^2 sigma T^4); missing: " +
                         missing);
    }
    Star s;
    s.name = in.name;
    s.mass = *in.mass;
    if (given == 3) {
        const double l_sb = stefan_boltzmann_luminosity(*in.radius, *in.teff).value();
        const double l = in.luminosity->value();
        const double mismatch = l / l_sb - 1.0;
        if (!(std::abs(mismatch) <= stefan_boltzmann_tolerance))
            throw InputError("--luminosity, --teff and --star-radius disagree: --luminosity is " +
                             format_lsun(l) + ", but 4 pi R^2 sigma T^4 with --star-radius " +
                             detail::num(in_solar_radii(*in.radius)) + " Rsun and --teff " +
                             detail::num(in.teff->value()) + " K is " + format_lsun(l_sb) + " (" +
                             detail::num(100.0 * mismatch, 3) + "% apart; accepted: within " +
                             detail::num(100.0 * stefan_boltzmann_tolerance) +
                             "%). Give only two of the three, or values that agree");
        s.luminosity = *in.luminosity;
        s.teff = *in.teff;
        s.radius = *in.radius;
    } else if (!in.luminosity) {
        s.teff = *in.teff;
        s.radius = *in.radius;
        s.luminosity = stefan_boltzmann_luminosity(s.radius, s.teff);
    } else if (!in.teff) {
        s.luminosity = *in.luminosity;
        s.radius = *in.radius;
        s.teff = stefan_boltzmann_teff(s.luminosity, s.radius);
    } else {
        s.luminosity = *in.luminosity;
        s.teff = *in.teff;
        s.radius = stefan_boltzmann_radius(s.luminosity, s.teff);
    }
    if (!(std::isfinite(s.luminosity.value()) && std::isfinite(s.teff.value()) &&
          std::isfinite(s.radius.value()) && s.luminosity.value() > 0.0 && s.teff.value() > 0.0 &&
          s.radius.value() > 0.0))
        throw InputError("--luminosity, --teff, --star-radius: the star's values overflow; "
                         "check their units");
    s.spectrum = in.spectrum ? in.spectrum : planck_spectrum(s.teff);
    return s;
}

} // namespace holdfast
