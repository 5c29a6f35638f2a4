// Quantity text parser: a small recursive-descent reader over a fixed unit table.
// The table lists whole symbols (no general SI-prefix rule) so that "min", "Msun" and "mm"
// can never be misread as a prefix plus a unit.
#include "holdfast/parse.hpp"

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <sstream>

#include "holdfast/errors.hpp"

namespace holdfast {
namespace {

struct UnitEntry {
    std::string_view symbol;
    double factor_si;
    Dimension dimension;
};

using constants::au_m;
using constants::erg_J;
using constants::julian_year_s;
using constants::parsec_m;

// IAU 2015 B3 nominal GM for the Earth and Jupiter; masses follow with CODATA 2018 G.
constexpr double earth_gm_m3_s2 = 3.986004e14;
constexpr double jupiter_gm_m3_s2 = 1.2668653e17;
constexpr double electron_volt_J = 1.602176634e-19; // CODATA 2018, exact

const std::array unit_table{
    // length
    UnitEntry{"m", 1.0, dims::length},
    UnitEntry{"cm", 1e-2, dims::length},
    UnitEntry{"mm", 1e-3, dims::length},
    UnitEntry{"um", 1e-6, dims::length},
    UnitEntry{"\xC2\xB5m", 1e-6, dims::length}, // micro sign
    UnitEntry{"\xCE\xBCm", 1e-6, dims::length}, // Greek mu
    UnitEntry{"micron", 1e-6, dims::length},
    UnitEntry{"nm", 1e-9, dims::length},
    UnitEntry{"Angstrom", 1e-10, dims::length},
    UnitEntry{"AA", 1e-10, dims::length},
    UnitEntry{"km", 1e3, dims::length},
    UnitEntry{"au", au_m, dims::length},
    UnitEntry{"AU", au_m, dims::length},
    UnitEntry{"pc", parsec_m, dims::length},
    UnitEntry{"kpc", 1e3 * parsec_m, dims::length},
    UnitEntry{"Mpc", 1e6 * parsec_m, dims::length},
    UnitEntry{"Rsun", constants::solar_radius_m, dims::length},
    // mass
    UnitEntry{"kg", 1.0, dims::mass},
    UnitEntry{"g", 1e-3, dims::mass},
    UnitEntry{"Msun", constants::solar_mass_kg, dims::mass},
    UnitEntry{"Mearth", earth_gm_m3_s2 / constants::gravitational_constant_SI, dims::mass},
    UnitEntry{"Mjup", jupiter_gm_m3_s2 / constants::gravitational_constant_SI, dims::mass},
    // time
    UnitEntry{"s", 1.0, dims::time},
    UnitEntry{"min", 60.0, dims::time},
    UnitEntry{"h", 3600.0, dims::time},
    UnitEntry{"d", 86400.0, dims::time},
    UnitEntry{"day", 86400.0, dims::time},
    UnitEntry{"yr", julian_year_s, dims::time},
    UnitEntry{"kyr", 1e3 * julian_year_s, dims::time},
    UnitEntry{"Myr", 1e6 * julian_year_s, dims::time},
    UnitEntry{"Gyr", 1e9 * julian_year_s, dims::time},
    // temperature
    UnitEntry{"K", 1.0, dims::temperature},
    // energy and power
    UnitEntry{"J", 1.0, dims::energy},
    UnitEntry{"erg", erg_J, dims::energy},
    UnitEntry{"eV", electron_volt_J, dims::energy},
    UnitEntry{"keV", 1e3 * electron_volt_J, dims::energy},
    UnitEntry{"W", 1.0, dims::power},
    UnitEntry{"Lsun", constants::solar_luminosity_W, dims::power},
    // force (for completeness in compound units)
    UnitEntry{"N", 1.0, Dimension{1, 1, -2, 0}},
    UnitEntry{"dyn", 1e-5, Dimension{1, 1, -2, 0}},
};

Dimension add(Dimension a, Dimension b, int sign = 1) {
    return {a.length + sign * b.length, a.mass + sign * b.mass, a.time + sign * b.time,
            a.temperature + sign * b.temperature};
}
Dimension scale(Dimension a, int p) {
    return {a.length * p, a.mass * p, a.time * p, a.temperature * p};
}

std::string quoted(std::string_view s) { return "'" + std::string(s) + "'"; }

[[noreturn]] void refuse(std::string_view option, std::string_view text, const std::string& why,
                         const std::string& accepted) {
    std::string msg = std::string(option) + ": cannot use " + quoted(text) + ": " + why;
    if (!accepted.empty()) msg += ". Accepted: " + accepted;
    throw InputError(msg);
}

bool is_symbol_char(char c) {
    const auto u = static_cast<unsigned char>(c);
    return std::isalpha(u) || c == '_' || u >= 0x80;
}

// Recursive-descent reader for a unit expression.
class UnitReader {
  public:
    UnitReader(std::string_view s, std::string_view option, std::string_view whole)
        : s_(s), option_(option), whole_(whole) {}

    ParsedQuantity read_all() {
        ParsedQuantity q = read_expression();
        skip_spaces();
        if (pos_ != s_.size()) fail("unexpected " + quoted(s_.substr(pos_, 1)) + " in the unit");
        return q;
    }

  private:
    std::string_view s_;
    std::string_view option_;
    std::string_view whole_;
    std::size_t pos_ = 0;

    [[noreturn]] void fail(const std::string& why) {
        refuse(option_, whole_, why,
               "a number followed by units such as 'Msun', 'erg/s', 'erg/s/cm2', 'g cm^-3'");
    }
    void skip_spaces() {
        while (pos_ < s_.size() && (s_[pos_] == ' ' || s_[pos_] == '\t'))
            ++pos_;
    }
    bool at_end() const { return pos_ >= s_.size(); }

    ParsedQuantity read_expression() {
        skip_spaces();
        ParsedQuantity acc = read_term();
        for (;;) {
            const std::size_t before = pos_;
            skip_spaces();
            if (at_end() || s_[pos_] == ')') return acc;
            int sign = 1;
            if (s_[pos_] == '*') {
                ++pos_;
            } else if (s_[pos_] == '/') {
                sign = -1;
                ++pos_;
            } else if (pos_ == before) {
                fail("expected '*', '/' or a space between units");
            }
            skip_spaces();
            const ParsedQuantity t = read_term();
            acc.value_si = sign > 0 ? acc.value_si * t.value_si : acc.value_si / t.value_si;
            acc.dimension = add(acc.dimension, t.dimension, sign);
        }
    }

    ParsedQuantity read_term() {
        if (at_end()) fail("a unit is missing after an operator");
        ParsedQuantity base;
        if (s_[pos_] == '(') {
            ++pos_;
            base = read_expression();
            skip_spaces();
            if (at_end() || s_[pos_] != ')') fail("a ')' is missing");
            ++pos_;
        } else {
            const std::size_t start = pos_;
            while (!at_end() && is_symbol_char(s_[pos_]))
                ++pos_;
            const std::string_view sym = s_.substr(start, pos_ - start);
            if (sym.empty()) fail("expected a unit at " + quoted(s_.substr(start)));
            base = lookup(sym);
        }
        const int p = read_power();
        if (p != 1) {
            base.value_si = std::pow(base.value_si, p);
            base.dimension = scale(base.dimension, p);
        }
        return base;
    }

    // "^-2", "**2" or digits glued to the symbol ("cm2", "s-1").
    int read_power() {
        if (at_end()) return 1;
        if (s_[pos_] == '^') {
            ++pos_;
        } else if (s_.substr(pos_, 2) == "**") {
            pos_ += 2;
        } else if (!(std::isdigit(static_cast<unsigned char>(s_[pos_])) ||
                     (s_[pos_] == '-' && pos_ + 1 < s_.size() &&
                      std::isdigit(static_cast<unsigned char>(s_[pos_ + 1]))))) {
            return 1;
        }
        int p = 0;
        const char* first = s_.data() + pos_;
        const char* last = s_.data() + s_.size();
        if (first != last && *first == '+') ++first;
        auto [ptr, ec] = std::from_chars(first, last, p);
        if (ec != std::errc{}) fail("a power must be a whole number, as in 'cm^-2' or 'cm2'");
        if (p == 0 || std::abs(p) > 12) fail("a power must be a non-zero whole number up to 12");
        pos_ = static_cast<std::size_t>(ptr - s_.data());
        return p;
    }

    ParsedQuantity lookup(std::string_view sym) {
        for (const auto& u : unit_table)
            if (u.symbol == sym) return {u.factor_si, u.dimension};
        fail("unknown unit " + quoted(sym));
    }
};

std::string_view trim(std::string_view s) {
    while (!s.empty() && std::isspace(static_cast<unsigned char>(s.front())))
        s.remove_prefix(1);
    while (!s.empty() && std::isspace(static_cast<unsigned char>(s.back())))
        s.remove_suffix(1);
    return s;
}

// Reads a leading number; returns the rest. Refuses NaN and infinity here so that no
// caller ever sees one.
double read_number(std::string_view& s, std::string_view option, std::string_view whole) {
    s = trim(s);
    const char* first = s.data();
    const char* last = s.data() + s.size();
    if (first != last && *first == '+') ++first;
    double v = 0.0;
    auto [ptr, ec] = std::from_chars(first, last, v, std::chars_format::general);
    if (ec == std::errc::result_out_of_range)
        refuse(option, whole, "the number is out of the range of double precision", "");
    if (ec != std::errc{} || ptr == first)
        refuse(option, whole, "no number found at the start", "a number, as in '1.4' or '3e38'");
    if (!std::isfinite(v))
        refuse(option, whole, "the number is not finite (NaN or infinity)", "a finite number");
    s = s.substr(static_cast<std::size_t>(ptr - s.data()));
    return v;
}

} // namespace

std::string dimension_name(const Dimension& d) {
    struct Named {
        Dimension d;
        const char* name;
    };
    static const Named names[] = {
        {dims::none, "dimensionless number"},
        {dims::length, "length"},
        {dims::mass, "mass"},
        {dims::time, "time"},
        {dims::temperature, "temperature"},
        {dims::power, "luminosity (power)"},
        {dims::energy, "energy"},
        {dims::flux, "flux (power per area)"},
        {dims::mass_opacity, "mass opacity (area per mass)"},
        {dims::mass_rate, "mass rate (mass per time)"},
        {dims::mass_density, "mass density"},
        {dims::velocity, "speed"},
    };
    for (const auto& n : names)
        if (n.d == d) return n.name;
    std::ostringstream os;
    os << "quantity of dimension m^" << d.length << " kg^" << d.mass << " s^" << d.time << " K^"
       << d.temperature;
    return os.str();
}

std::string accepted_units(const Dimension& d) {
    if (d == dims::none) return "a plain number without a unit";
    std::string list;
    for (const auto& u : unit_table) {
        if (!(u.dimension == d)) continue;
        if (static_cast<unsigned char>(u.symbol.front()) >= 0x80) continue; // keep ASCII
        if (!list.empty()) list += ", ";
        list += u.symbol;
    }
    // Compound dimensions have no single symbol: give the usual spellings.
    std::string examples;
    if (d == dims::power) examples = "erg/s";
    if (d == dims::flux) examples = "W/m2, erg/s/cm2, erg s^-1 cm^-2";
    if (d == dims::mass_opacity) examples = "cm2/g, m2/kg";
    if (d == dims::mass_rate) examples = "kg/s, g/s, Msun/yr";
    if (d == dims::mass_density) examples = "g/cm3, kg/m3, g cm^-3";
    if (d == dims::velocity) examples = "m/s, km/s";
    if (!examples.empty()) list += (list.empty() ? "" : ", ") + examples;
    if (list.empty()) list = "any combination of units with this dimension";
    return "units of " + dimension_name(d) + ": " + list;
}

ParsedQuantity parse_quantity_text(std::string_view text, std::string_view option) {
    std::string_view rest = text;
    const double number = read_number(rest, option, text);
    rest = trim(rest);
    if (rest.empty()) return {number, dims::none};
    ParsedQuantity unit = UnitReader(rest, option, text).read_all();
    const double v = number * unit.value_si;
    if (!std::isfinite(v)) refuse(option, text, "the value overflows in SI units", "");
    return {v, unit.dimension};
}

double parse_si_value(std::string_view text, const Dimension& want, std::string_view option,
                      Sign sign) {
    const ParsedQuantity q = parse_quantity_text(text, option);
    if (!(q.dimension == want)) {
        std::string why;
        if (q.dimension == dims::none)
            why = "a unit is missing; this option needs a " + dimension_name(want);
        else
            why = "that is a " + dimension_name(q.dimension) + ", but this option needs a " +
                  dimension_name(want);
        refuse(option, text, why, accepted_units(want));
    }
    if (sign == Sign::positive && !(q.value_si > 0.0))
        refuse(option, text, "the value must be greater than zero", "a positive value");
    if (sign == Sign::non_negative && q.value_si < 0.0)
        refuse(option, text, "the value must not be negative", "zero or a positive value");
    return q.value_si;
}

double parse_number(std::string_view text, std::string_view option) {
    return parse_si_value(text, dims::none, option, Sign::any);
}

QuantityRange parse_range_si(std::string_view text, const Dimension& want,
                             std::string_view option) {
    const auto dots = text.find("..");
    if (dots == std::string_view::npos)
        refuse(option, text, "not a range", "a range such as '0.01um..1mm'");
    std::string_view lo = trim(text.substr(0, dots));
    std::string_view hi = trim(text.substr(dots + 2));
    // "0.01..1000 um": the unit written once applies to both ends.
    std::string lo_text(lo);
    {
        std::string_view probe = lo;
        const double unused = read_number(probe, option, text);
        (void)unused;
        if (trim(probe).empty() && !(want == dims::none)) {
            std::string_view hrest = hi;
            (void)read_number(hrest, option, text);
            lo_text += " " + std::string(trim(hrest));
        }
    }
    QuantityRange r;
    r.low_si = parse_si_value(lo_text, want, option, Sign::positive);
    r.high_si = parse_si_value(hi, want, option, Sign::positive);
    if (!(r.high_si >= r.low_si))
        refuse(option, text, "the upper end is below the lower end",
               "a range 'low..high' with low <= high");
    return r;
}

std::vector<double> log_spaced(double low, double high, int points) {
    std::vector<double> v;
    if (points < 1) return v;
    if (points == 1 || low == high) return {low};
    v.reserve(static_cast<std::size_t>(points));
    const double l0 = std::log(low);
    const double step = (std::log(high) - l0) / (points - 1);
    for (int i = 0; i < points; ++i)
        v.push_back(std::exp(l0 + step * i));
    v.front() = low; // exact ends, whatever exp(log()) rounding does
    v.back() = high;
    return v;
}

std::vector<double> parse_values_si(std::string_view text, const Dimension& want,
                                    std::string_view option, int points) {
    if (text.find("..") != std::string_view::npos) {
        const QuantityRange r = parse_range_si(text, want, option);
        if (points < 2 && r.low_si != r.high_si)
            throw InputError(std::string(option) + ": a range needs at least 2 points, got " +
                             std::to_string(points));
        return log_spaced(r.low_si, r.high_si, points);
    }
    std::vector<double> out;
    std::size_t start = 0;
    while (start <= text.size()) {
        const auto comma = text.find(',', start);
        const auto piece = text.substr(
            start, comma == std::string_view::npos ? std::string_view::npos : comma - start);
        out.push_back(parse_si_value(trim(piece), want, option, Sign::positive));
        if (comma == std::string_view::npos) break;
        start = comma + 1;
    }
    return out;
}

std::complex<double> parse_refractive_index(std::string_view text, std::string_view option) {
    const std::string_view accepted =
        "n+ki with n > 0 and k >= 0, as '1.7+0.03i', or 'n,k' as '1.7,0.03', or 'n'";
    std::string_view s = trim(text);
    double n = 0.0;
    double k = 0.0;
    const char* first = s.data();
    const char* last = s.data() + s.size();
    auto [p1, e1] = std::from_chars(first, last, n);
    if (e1 != std::errc{} || p1 == first)
        refuse(option, text, "no real part found", std::string(accepted));
    std::string_view rest = trim(std::string_view(p1, static_cast<std::size_t>(last - p1)));
    if (!rest.empty()) {
        bool imaginary_form = false;
        if (rest.front() == ',') {
            rest.remove_prefix(1);
        } else if (rest.front() == '+' || rest.front() == '-') {
            imaginary_form = true;
            if (rest.front() == '-')
                refuse(option, text, "a negative imaginary part (k < 0) would mean a gain medium",
                       std::string(accepted));
            rest.remove_prefix(1);
        } else {
            refuse(option, text, "cannot read the imaginary part", std::string(accepted));
        }
        rest = trim(rest);
        const char* f2 = rest.data();
        const char* l2 = rest.data() + rest.size();
        auto [p2, e2] = std::from_chars(f2, l2, k);
        if (e2 != std::errc{} || p2 == f2)
            refuse(option, text, "cannot read the imaginary part", std::string(accepted));
        std::string_view tail = trim(std::string_view(p2, static_cast<std::size_t>(l2 - p2)));
        if (imaginary_form) {
            if (tail != "i" && tail != "j")
                refuse(option, text, "the imaginary part must end with 'i'", std::string(accepted));
        } else if (!tail.empty()) {
            refuse(option, text, "unexpected text after k", std::string(accepted));
        }
    }
    if (!std::isfinite(n) || !std::isfinite(k))
        refuse(option, text, "not finite", std::string(accepted));
    if (!(n > 0.0)) refuse(option, text, "the real part n must be positive", std::string(accepted));
    if (k < 0.0)
        refuse(option, text, "a negative imaginary part (k < 0) would mean a gain medium",
               std::string(accepted));
    return {n, k};
}

} // namespace holdfast
