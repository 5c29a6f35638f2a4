#pragma once
// Sweeps: a grid over stars, grain materials, parent orbits, distances and grain radii, read
// from a TOML file, computed on several threads with the spectral means shared, and written
// as CSV rows in a fixed order (so the file is the same whatever the thread or process count).
//
// Row order (the last axis changes fastest): star, material, orbit, distance, radius.
// A "block" is the rows of one (star, material) pair: orbits x distances x radii rows. Blocks
// are the unit of work; the spectral means of one (material, spectrum) curve are computed once
// per sweep and shared by every star with that spectrum, every orbit and every distance.
#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <functional>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "holdfast/grain.hpp"
#include "holdfast/material.hpp"
#include "holdfast/star.hpp"
#include "holdfast/units.hpp"

namespace holdfast {

// ---- the spec ----------------------------------------------------------------------------------
// What each row may carry besides its axes. Names as in the CSV header.
enum class SweepQuantity {
    qpr_mean,      // qpr_mean: <Q_pr> over the stellar spectrum
    qabs_mean,     // qabs_mean: <Q_abs> over the stellar spectrum
    beta,          // beta
    bound,         // bound: a grain released from the orbit stays bound (beta < beta_crit)
    blowout_radii, // blowout_radii_um: every radius where beta = beta_crit (star, material, orbit)
    temperature,   // temperature_K: equilibrium temperature at the distance
    pr_drag_time,  // pr_drag_time_yr: Poynting-Robertson time from the distance (circular orbit)
};
// The name used in the sweep file's `quantities` list ("beta", "blowout_radii", ...).
std::string sweep_quantity_name(SweepQuantity q);
bool sweep_quantity_needs_orbit(SweepQuantity q);
bool sweep_quantity_needs_distance(SweepQuantity q);

struct SweepStar {
    std::string label; // the CSV's `star` column
    Star star;
    std::string spectrum_key; // stars with the same key share spectral means
};

struct SweepMaterial {
    std::string label;                                  // the CSV's `material` column
    std::string description;                            // one line for people (sidecar)
    GrainOptics optics;                                 // after porosity
    MassDensity density = MassDensity::from_value(0.0); // of the porous grain
    double porosity = 0.0;
    std::string limits; // where the material model is not valid
};

struct SweepSpec {
    std::string source_name; // the file name, for messages
    std::vector<SweepStar> stars;
    std::vector<SweepMaterial> materials;
    std::vector<ReleasePoint> orbits; // one circular orbit released at pericentre by default
    std::vector<double> distances_m;  // empty: no distance axis
    std::vector<double> radii_um;     // ascending
    std::vector<SweepQuantity> quantities;
    GrainEfficiencySettings settings;
    bool has_orbit_axis = false;    // an orbit-dependent quantity was asked for
    bool has_distance_axis = false; // a distance-dependent quantity was asked for
};

// Parses a sweep file's text (see README "The sweep file" for the schema). Relative file names (nk,
// spectrum) are taken relative to `base_folder`. Throws InputError whose message starts with
// "SOURCE:LINE: KEY:" for an unknown key, a value of the wrong type, a quantity with the wrong
// unit or out of range, or a missing required key; DataFileError for a bad nk or spectrum file
// (also naming the key and line that named it).
SweepSpec parse_sweep_spec(std::string_view toml_text, const std::string& source_name,
                           const std::string& base_folder);
// Reads and parses a sweep file; InputError if it cannot be read.
SweepSpec read_sweep_spec(const std::string& path);
// The whole text of a sweep file (for the sidecar and the resume check).
std::string read_text_file(const std::string& path);

// ---- the grid ----------------------------------------------------------------------------------
struct SweepShape {
    std::uint64_t stars = 0, materials = 0, orbits = 0, distances = 0, radii = 0;
    std::uint64_t rows_per_block() const { return orbits * distances * radii; }
    std::uint64_t blocks() const { return stars * materials; }
    std::uint64_t rows() const { return blocks() * rows_per_block(); }
};
SweepShape sweep_shape(const SweepSpec& spec);

// The CSV header line, with its newline.
std::string sweep_csv_header(const SweepSpec& spec);

// Formats a number as the CSV does: 10 significant digits, shortest of fixed or exponent
// (as printf's %.10g), independent of the locale.
std::string sweep_number(double v);

// ---- running it --------------------------------------------------------------------------------
struct SweepRunOptions {
    unsigned threads = 1;
    std::uint64_t first_row = 0; // rows before this are not produced (resume)
    // Which blocks this process computes: those with index % block_stride == block_offset
    // (several processes, e.g. MPI ranks). 1 and 0: all of them.
    std::uint64_t block_stride = 1;
    std::uint64_t block_offset = 0;
    // Polled by the calling thread; when it returns true the run stops at the next block
    // boundary it can reach cleanly: everything delivered so far stays complete and in order.
    std::function<bool()> stop_requested;
    // Blocks computed ahead of the one being delivered, at most (bounds memory). 0: as many as
    // about 64 MiB of CSV text allows, from 4 to 64 per thread.
    std::size_t window = 0;
};

// One delivered piece: complete CSV lines of block `block`, starting at row `first_row`
// (global row index) and holding `rows` rows.
struct SweepChunk {
    std::uint64_t block = 0;
    std::uint64_t first_row = 0;
    std::uint64_t rows = 0;
    std::string text;
};

struct SweepOutcome {
    std::uint64_t rows_delivered = 0;
    bool stopped = false;           // stop_requested said so before the end
    std::vector<std::string> notes; // from the spectral means (out-of-band notes), unique
};

// Computes this process's blocks from first_row on, with `threads` worker threads, and calls
// `deliver` on the calling thread, in increasing block order, once per block. The chunks'
// text does not depend on the number of threads or processes. Exceptions from the computation
// (InputError, NumericalError) stop the other threads and are rethrown here; chunks delivered
// before stay valid.
SweepOutcome run_sweep(const SweepSpec& spec, const SweepRunOptions& options,
                       const std::function<void(const SweepChunk&)>& deliver);

// ---- the CSV file ------------------------------------------------------------------------------
// Prepares an existing CSV to continue a stopped run: checks that its first line is `header`
// (InputError naming the file otherwise), cuts a trailing partial line (a row cut by a kill),
// and returns how many complete rows follow the header. A file shorter than the header is
// rewritten with the header only.
std::uint64_t prepare_sweep_resume(const std::string& csv_path, const std::string& header);

// Appends chunks to a file and flushes after each, so a stopped run leaves only complete rows
// (a kill in the middle of a write leaves at most one partial line, which
// prepare_sweep_resume cuts).
class SweepCsvWriter {
  public:
    // `truncate` true: create or empty the file and write `header`; false: append.
    SweepCsvWriter(const std::string& path, bool truncate, const std::string& header);
    ~SweepCsvWriter();
    SweepCsvWriter(const SweepCsvWriter&) = delete;
    SweepCsvWriter& operator=(const SweepCsvWriter&) = delete;
    // Writes and flushes; throws InputError naming the file if the write fails (disc full).
    void write(std::string_view text);

  private:
    std::string path_;
    std::FILE* file_ = nullptr;
};

} // namespace holdfast
