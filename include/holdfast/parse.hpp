#pragma once
// Text to checked quantities: "1.4 Msun", "3e38 erg/s", "2.1e-9 erg/s/cm2", "0.34 cm2/g",
// "1e-8 Msun/yr". A unit expression is a product of unit symbols, each with an optional
// integer power ("cm^-2", "cm2", "s-1"), joined by '*' or spaces; '/' divides by the one
// factor (or parenthesised group) that follows it, so "erg/s/cm2" is erg s^-1 cm^-2.
// Every refusal is an InputError whose message names the option, the text read and the
// units accepted for the dimension the option needs.
#include <complex>
#include <string>
#include <string_view>
#include <vector>

#include "holdfast/units.hpp"

namespace holdfast {

// Exponents of the SI base dimensions the tool uses.
struct Dimension {
    int length = 0;
    int mass = 0;
    int time = 0;
    int temperature = 0;
    friend constexpr bool operator==(const Dimension&, const Dimension&) = default;
};

namespace dims {
inline constexpr Dimension none{};
inline constexpr Dimension length{1, 0, 0, 0};
inline constexpr Dimension mass{0, 1, 0, 0};
inline constexpr Dimension time{0, 0, 1, 0};
inline constexpr Dimension temperature{0, 0, 0, 1};
inline constexpr Dimension power{2, 1, -3, 0};
inline constexpr Dimension energy{2, 1, -2, 0};
inline constexpr Dimension flux{0, 1, -3, 0};
inline constexpr Dimension mass_opacity{2, -1, 0, 0};
inline constexpr Dimension mass_rate{0, 1, -1, 0};
inline constexpr Dimension mass_density{-3, 1, 0, 0};
inline constexpr Dimension velocity{1, 0, -1, 0};
} // namespace dims

// The dimension of each public quantity type, so parse_quantity<Mass> knows what to ask for.
template <class Q> struct dimension_of;
template <> struct dimension_of<Dimensionless> { static constexpr Dimension value = dims::none; };
template <> struct dimension_of<Length> { static constexpr Dimension value = dims::length; };
template <> struct dimension_of<Mass> { static constexpr Dimension value = dims::mass; };
template <> struct dimension_of<Time> { static constexpr Dimension value = dims::time; };
template <> struct dimension_of<Temperature> {
    static constexpr Dimension value = dims::temperature;
};
template <> struct dimension_of<Power> { static constexpr Dimension value = dims::power; };
template <> struct dimension_of<Energy> { static constexpr Dimension value = dims::energy; };
template <> struct dimension_of<EnergyFlux> { static constexpr Dimension value = dims::flux; };
template <> struct dimension_of<MassOpacity> {
    static constexpr Dimension value = dims::mass_opacity;
};
template <> struct dimension_of<MassRate> { static constexpr Dimension value = dims::mass_rate; };
template <> struct dimension_of<MassDensity> {
    static constexpr Dimension value = dims::mass_density;
};
template <> struct dimension_of<Velocity> { static constexpr Dimension value = dims::velocity; };

// What sign a value may have.
enum class Sign { any, positive, non_negative };

// A human name for a dimension ("mass", "luminosity (power)") and the units accepted for it,
// as shown in error messages and --help.
std::string dimension_name(const Dimension& d);
std::string accepted_units(const Dimension& d);

// A number with a unit, before any dimension check: value in SI base units.
struct ParsedQuantity {
    double value_si = 0.0;
    Dimension dimension;
};
// Throws InputError naming `option` on a syntax error, unknown unit, NaN or infinity.
ParsedQuantity parse_quantity_text(std::string_view text, std::string_view option);

// Parses `text`, checks it has dimension `want` and the sign rule; returns the SI value.
// A plain number is accepted only where `want` is dimensionless.
double parse_si_value(std::string_view text, const Dimension& want, std::string_view option,
                      Sign sign = Sign::positive);

template <class Q>
Q parse_quantity(std::string_view text, std::string_view option, Sign sign = Sign::positive) {
    return Q::from_value(parse_si_value(text, dimension_of<Q>::value, option, sign));
}

// A plain number (no unit), with an inclusive or exclusive range check described in words
// by `accepted` for the error message ("a number in [0, 1]").
double parse_number(std::string_view text, std::string_view option);

// A range of quantities, "0.01um..1mm" (the unit may be given once, on the upper end, as
// in "0.01..1000 um"); both ends must be positive and increasing.
struct QuantityRange {
    double low_si = 0.0;
    double high_si = 0.0;
};
QuantityRange parse_range_si(std::string_view text, const Dimension& want, std::string_view option);
// Either a range "a..b", or a comma-separated list "a,b,c", or one value: SI values.
// A range is expanded to `points` log-spaced values (points >= 2 unless low == high).
std::vector<double> parse_values_si(std::string_view text, const Dimension& want,
                                    std::string_view option, int points);

// A complex refractive index m = n + ik, as "1.7+0.03i", "1.7-0.03i" is refused (k >= 0 is
// the absorbing convention used throughout), "1.7,0.03" or "1.7" (k = 0).
std::complex<double> parse_refractive_index(std::string_view text, std::string_view option);

// `points` log-spaced values from low to high inclusive.
std::vector<double> log_spaced(double low, double high, int points);

} // namespace holdfast
