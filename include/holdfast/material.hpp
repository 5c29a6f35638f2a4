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
    // Wavelengths (um, increasing) where the index has kinks, e.g. the rows of a table that
    // is interpolated between them; empty for a smooth index. Pass them to the spectral mean
    // (SpectralMeanSettings::breakpoints_um) so it integrates between kinks instead of
    // bisecting onto each one. Wrappers and mixtures should pass on their components' points.
    virtual std::vector<double> breakpoints_um() const { return {}; }
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

// ---- tabulated optical constants (nk files) ------------------------------------------------
// One row of an optical-constants table: vacuum wavelength in micrometres, n, k.
struct NkRow {
    double wavelength_um = 0.0;
    double n = 0.0;
    double k = 0.0;
};

// What to do with rows whose k < 0 (unphysical; some published tables have them, for example
// Querry 1985 corundum). Default: refuse the file naming the line.
enum class NegativeK { refuse, clip_to_zero };

struct NkTable {
    std::vector<NkRow> rows;        // strictly increasing wavelength
    std::string source;             // file name
    std::string format;             // "nk text" or "refractiveindex.info YAML (tabulated nk)" etc.
    std::vector<std::string> notes; // e.g. how many k < 0 rows were clipped
};

// Reads a plain nk text file: three columns wavelength_um n k separated by spaces, tabs or
// commas; '#' starts a comment; blank lines are skipped. Throws DataFileError naming the file
// and line for: a malformed line (not three numbers), a value that is not finite, a
// wavelength <= 0, a wavelength not above the previous row's (unsorted or duplicate), n <= 0,
// k < 0 (unless negative_k says clip), or fewer than two rows.
NkTable read_nk_text(const std::string& path, NegativeK negative_k = NegativeK::refuse);

// Reads a refractiveindex.info database entry (YAML): the first DATA item of type
// "tabulated nk" (wavelength_um n k), or a "tabulated n" item with a "tabulated k" item
// (k interpolated onto the n wavelengths, linearly in log wavelength, within their common
// range). Formula items ("formula 1".."formula 9") are refused with DataFileError: holdfast
// reads tables only. A small purpose-built reader, not a general YAML parser: it looks for
// "DATA:", then "- type: ...", then a "data: |" block of indented lines. Same checks as
// read_nk_text; line numbers are those of the YAML file.
NkTable read_nk_yaml(const std::string& path, NegativeK negative_k = NegativeK::refuse);

// Either of the above by file name: .yml or .yaml is read as refractiveindex.info YAML,
// anything else as nk text.
NkTable read_nk_file(const std::string& path, NegativeK negative_k = NegativeK::refuse);

// Checks rows (the same rules as the readers, message "row N") and returns interpolated
// optical constants defined on [first wavelength, last wavelength]:
//  - in wavelength: linear in ln(lambda), because tables are spaced roughly evenly in log
//    wavelength over many decades, and optical constants vary on relative, not absolute,
//    wavelength scales;
//  - n: linearly (n is O(1) and smooth; never 0, and linear keeps it positive);
//  - k: linearly in ln(k) where both neighbours are > 0 (k spans many decades across a
//    table, e.g. 1e-9 to 1 for ice; linear would bow upwards by orders of magnitude between
//    coarse rows), and linearly where a neighbour is 0 (transparent windows, k = 0 rows).
// index_at_um outside the range throws InputError naming the table's range; see OutOfBand.
std::shared_ptr<const OpticalConstants> tabulated_index(NkTable table);

// ---- beyond the table's wavelength range ----------------------------------------------------
// When the stellar spectrum's integration band (spectral_mean.hpp) reaches beyond the range
// of the optical constants:
//   refuse          (default) stop with an InputError naming the table's range and the range
//                   needed;
//   hold_end_values use the index at the nearest end of the table outside it (wrap the optics
//                   with with_held_end_values);
//   limit_band      integrate only over the part of the band the table covers, renormalising
//                   <Q> to the flux in that part, and report the fraction of flux dropped.
// plan_spectral_band (spectral_mean.hpp) applies the choice for a spectrum and optics.
enum class OutOfBand { refuse, hold_end_values, limit_band };

// "refuse", "hold" or "limit-band" (as typed on the command line); InputError naming `option`
// otherwise.
OutOfBand parse_out_of_band(const std::string& text, const std::string& option);
std::string out_of_band_name(OutOfBand choice);

// Throws InputError unless [low_um, high_um] lies inside the optics' range; the message names
// the table (describe()), its range and the range needed, and the --out-of-band choices.
void require_wavelength_coverage(const OpticalConstants& optics, double low_um, double high_um);

// The same optics, defined at every wavelength: outside [min, max] the index at the nearest
// end. describe() says so.
std::shared_ptr<const OpticalConstants>
with_held_end_values(std::shared_ptr<const OpticalConstants> optics);

// ---- checking a user's file (holdfast materials check) --------------------------------------
struct NkCheckSummary {
    std::string source;
    std::string format;
    std::size_t rows = 0;
    double wavelength_min_um = 0.0;
    double wavelength_max_um = 0.0;
    double n_min = 0.0, n_max = 0.0;
    double k_min = 0.0, k_max = 0.0;
    std::size_t zero_k_rows = 0;
    std::vector<std::string> warnings; // things that are legal but worth a look
};
// Reads the file (read_nk_file, so the same refusals), builds the interpolant, evaluates it
// between every pair of rows (a NaN there is a NumericalError) and summarises.
NkCheckSummary check_nk_file(const std::string& path, NegativeK negative_k = NegativeK::refuse);

// ---- grain materials ------------------------------------------------------------------------
struct Material {
    std::string name;
    std::shared_ptr<const OpticalConstants> optics;
    MassDensity density;
    std::string provenance; // where each number comes from, several lines
    std::string limits;     // one line for Report::assumptions: where the model is not valid
    std::string file;       // the material file it was read from
};

// Folder of the data files shipped with holdfast (tables/, holding materials/). Looked for in
// this order; the first that applies wins:
//  1. the environment variable HOLDFAST_TABLES, if set and not empty (taken as given, even if
//     the folder does not exist, so that a wrong setting shows up in the error that follows);
//  2. the installed layout next to the running program: <folder of the executable>/
//     ../share/holdfast/tables (PREFIX/bin/holdfast beside PREFIX/share/holdfast/tables), if
//     that folder exists. The executable is found through /proc/self/exe (Linux), so an
//     installed tree works wherever its prefix is and after it is moved;
//  3. the source tree's tables/ folder this library was built from, if it still exists (a
//     program run from the build tree).
// Throws DataFileError naming the places tried when none applies. A program that links
// holdfast_core from an installed package and lives elsewhere passes the folder explicitly
// (the overloads below; the CMake package sets holdfast_TABLES_DIR) or sets HOLDFAST_TABLES.
// The only place the core reads the environment.
std::string tables_directory();

// Names of the shipped materials (<tables>/materials/*.toml), sorted; the first form reads
// tables_directory(), the second the given tables folder.
std::vector<std::string> shipped_material_names();
std::vector<std::string> shipped_material_names(const std::string& tables_folder);

// A shipped material by name; InputError listing the known names for an unknown one. The
// first form reads tables_directory(), the second the given tables folder.
Material shipped_material(const std::string& name);
Material shipped_material(const std::string& name, const std::string& tables_folder);

// A material file (TOML): name, density_g_cm3, and either n and k (a constant index) or
// nk_file (a table, relative to the TOML file's folder). See tables/materials/*.toml.
// Throws DataFileError naming the file and the key that is missing or wrong.
Material read_material_file(const std::string& path);

} // namespace holdfast
