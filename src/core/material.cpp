// Grain materials: shipped material files (TOML, tables/materials), the tables folder, and
// what to do where the optical constants end (OutOfBand). The effective-medium functions of
// material.hpp live in effective_medium.cpp; tabulated optical constants in nk_file.cpp.
#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <filesystem>

#include <toml++/toml.h>

#include "holdfast/errors.hpp"
#include "holdfast/material.hpp"
#include "text_table.hpp"

namespace holdfast {
namespace {

namespace fs = std::filesystem;
using detail::num;

class HeldEndValues final : public OpticalConstants {
  public:
    explicit HeldEndValues(std::shared_ptr<const OpticalConstants> inner)
        : inner_(std::move(inner)), low_(inner_->min_wavelength_um()),
          high_(inner_->max_wavelength_um()) {}
    std::complex<double> index_at_um(double wavelength_um) const override {
        return inner_->index_at_um(std::clamp(wavelength_um, low_, high_));
    }
    std::vector<double> breakpoints_um() const override { return inner_->breakpoints_um(); }
    std::string describe() const override {
        return inner_->describe() + ", held at its end values outside " + num(low_) + "-" +
               num(high_) + " um";
    }

  private:
    std::shared_ptr<const OpticalConstants> inner_;
    double low_, high_;
};

// A material file's constant index: the same m at every wavelength. Shipped materials use it
// as an approximation for the stellar band; describe() says so.
class FileConstantIndex final : public OpticalConstants {
  public:
    FileConstantIndex(std::complex<double> m, std::string source)
        : m_(m), source_(std::move(source)) {}
    std::complex<double> index_at_um(double) const override { return m_; }
    std::string describe() const override {
        return "constant index " + num(m_.real(), 4) + "+" + num(m_.imag(), 4) +
               "i at every wavelength (a constant-index approximation; from " + source_ + ")";
    }

  private:
    std::complex<double> m_;
    std::string source_;
};

template <class T>
T required(const toml::table& t, const char* key, const std::string& path, const char* what) {
    const auto node = t[key];
    if (!node) throw DataFileError(path + ": the key '" + key + "' is missing (" + what + ")");
    const std::optional<T> v = node.value<T>();
    if (!v) throw DataFileError(path + ": the key '" + key + "' must be " + what);
    return *v;
}

std::string optional_text(const toml::table& t, const char* key) {
    return t[key].value<std::string>().value_or("");
}

fs::path materials_folder(const std::string& tables_folder) {
    return fs::path(tables_folder) / "materials";
}

// A tables folder is one that holds materials/.
bool is_tables_folder(const fs::path& folder) {
    std::error_code ec;
    return fs::is_directory(folder / "materials", ec);
}

} // namespace

OutOfBand parse_out_of_band(const std::string& text, const std::string& option) {
    if (text == "refuse") return OutOfBand::refuse;
    if (text == "hold") return OutOfBand::hold_end_values;
    if (text == "limit-band") return OutOfBand::limit_band;
    throw InputError(option + ": cannot use '" + text +
                     "'. Accepted: refuse (stop when the optical constants do not cover the "
                     "spectrum), hold (hold the table's end values beyond it), limit-band "
                     "(integrate only where the table has data)");
}

std::string out_of_band_name(OutOfBand choice) {
    switch (choice) {
    case OutOfBand::refuse:
        return "refuse";
    case OutOfBand::hold_end_values:
        return "hold";
    case OutOfBand::limit_band:
        return "limit-band";
    }
    throw InternalError("out_of_band_name: unknown choice");
}

void require_wavelength_coverage(const OpticalConstants& optics, double low_um, double high_um) {
    const double omin = optics.min_wavelength_um(), omax = optics.max_wavelength_um();
    if (low_um >= omin && high_um <= omax) return;
    throw InputError("the optical constants (" + optics.describe() + ") cover " + num(omin, 4) +
                     "-" + num(omax, 4) + " um, but the spectrum needs " + num(low_um, 4) + "-" +
                     num(high_um, 4) +
                     " um (the band holding all but the excluded flux fraction). Accepted: "
                     "optical constants covering that band, or --out-of-band hold (hold the "
                     "end values) or --out-of-band limit-band (integrate only where the table "
                     "has data)");
}

std::shared_ptr<const OpticalConstants>
with_held_end_values(std::shared_ptr<const OpticalConstants> optics) {
    if (!optics) throw InternalError("with_held_end_values: no optical constants given");
    const double lo = optics->min_wavelength_um(), hi = optics->max_wavelength_um();
    if (!(lo > 0.0) && std::isinf(hi)) return optics; // already defined everywhere
    return std::make_shared<HeldEndValues>(std::move(optics));
}

std::string tables_directory() {
    // The only read of the environment in the core: lets a test, or a copy of the tables
    // elsewhere, take precedence over the folders found below.
    if (const char* env = std::getenv("HOLDFAST_TABLES"); env != nullptr && *env != '\0')
        return env;
    std::string tried;
    // The installed layout, relative to the running program so that the prefix can be
    // anywhere (HOLDFAST_TABLES_FROM_BINDIR is the install's bin -> tables path, set by CMake).
    std::error_code ec;
    const fs::path program = fs::read_symlink("/proc/self/exe", ec);
    if (!ec) {
        const fs::path installed =
            (program.parent_path() / HOLDFAST_TABLES_FROM_BINDIR).lexically_normal();
        if (is_tables_folder(installed)) return installed.string();
        tried = installed.string();
    } else {
        tried = "the folder next to the program (/proc/self/exe: " + ec.message() + ")";
    }
    // The source tree the library was built from (a program run from the build tree).
    const fs::path source_tree = HOLDFAST_TABLES_DIR;
    if (is_tables_folder(source_tree)) return source_tree.string();
    throw DataFileError("cannot find holdfast's tables folder (the one holding materials/): "
                        "HOLDFAST_TABLES is not set, and neither " +
                        tried + " nor " + source_tree.string() +
                        " exists. Set HOLDFAST_TABLES to the installed share/holdfast/tables");
}

std::vector<std::string> shipped_material_names() {
    return shipped_material_names(tables_directory());
}

std::vector<std::string> shipped_material_names(const std::string& tables_folder) {
    const fs::path folder = materials_folder(tables_folder);
    std::error_code ec;
    std::vector<std::string> names;
    for (fs::directory_iterator it(folder, ec), end; !ec && it != end; it.increment(ec))
        if (it->is_regular_file() && it->path().extension() == ".toml")
            names.push_back(it->path().stem().string());
    if (ec)
        throw DataFileError(folder.string() + ": cannot list the shipped materials (" +
                            ec.message() + "); set HOLDFAST_TABLES to holdfast's tables folder");
    std::sort(names.begin(), names.end());
    return names;
}

Material shipped_material(const std::string& name) {
    return shipped_material(name, tables_directory());
}

Material shipped_material(const std::string& name, const std::string& tables_folder) {
    const auto names = shipped_material_names(tables_folder);
    const fs::path folder = materials_folder(tables_folder);
    if (std::find(names.begin(), names.end(), name) == names.end()) {
        std::string known;
        for (const auto& n : names)
            known += (known.empty() ? "" : ", ") + n;
        throw InputError("unknown material '" + name + "'. Known materials: " +
                         (known.empty() ? "(none found in " + folder.string() + ")" : known) +
                         "; or give the optical constants and density yourself");
    }
    Material m = read_material_file((folder / (name + ".toml")).string());
    if (m.name != name)
        throw DataFileError((folder / (name + ".toml")).string() + ": its name is '" + m.name +
                            "', not the file name '" + name + "'");
    return m;
}

Material read_material_file(const std::string& path) {
    toml::table t;
    try {
        t = toml::parse_file(path);
    } catch (const toml::parse_error& e) {
        const auto& where = e.source().begin;
        throw DataFileError(path + ", line " + std::to_string(where.line) + ": " +
                            std::string(e.description()));
    }
    Material m;
    m.name = required<std::string>(t, "name", path, "text, the material's name");
    const double rho = required<double>(t, "density_g_cm3", path, "a number, g/cm3");
    if (!(std::isfinite(rho) && rho > 0.0))
        throw DataFileError(path + ": density_g_cm3 = " + num(rho) + " is not > 0");
    m.density = g_per_cm3(rho);
    const bool has_index = static_cast<bool>(t["n"]);
    const bool has_table = static_cast<bool>(t["nk_file"]);
    if (has_index == has_table)
        throw DataFileError(path +
                            ": give either n and k (a constant index) or nk_file (a "
                            "table of wavelength_um n k), not " +
                            std::string(has_index ? "both" : "neither"));
    if (has_index) {
        const double n = required<double>(t, "n", path, "a number, the real part of the index");
        const double k = required<double>(t, "k", path, "a number >= 0, the imaginary part");
        if (!(std::isfinite(n) && n > 0.0))
            throw DataFileError(path + ": n = " + num(n) + " is not > 0");
        if (!(std::isfinite(k) && k >= 0.0))
            throw DataFileError(path + ": k = " + num(k) + " is not >= 0");
        m.optics = std::make_shared<FileConstantIndex>(std::complex<double>(n, k), path);
    } else {
        const fs::path table =
            fs::path(path).parent_path() / required<std::string>(t, "nk_file", path, "a file name");
        m.optics = tabulated_index(read_nk_file(table.string()));
    }
    const std::string summary = optional_text(t, "summary");
    const std::string density_source = optional_text(t, "density_source");
    const std::string index_source = optional_text(t, "index_source");
    m.provenance = summary;
    if (!density_source.empty())
        m.provenance += (m.provenance.empty() ? "" : "\n") + ("density: " + density_source);
    if (!index_source.empty())
        m.provenance += (m.provenance.empty() ? "" : "\n") + ("index: " + index_source);
    m.limits = optional_text(t, "limits");
    m.file = path;
    return m;
}

} // namespace holdfast
