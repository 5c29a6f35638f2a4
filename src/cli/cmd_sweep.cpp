// holdfast sweep: a grid over stars, materials, orbits, distances and radii from a TOML file,
// streamed to a CSV with a JSON sidecar. The engine (spec, grid, threads, shared spectral means,
// ordered chunks, the CSV file) is core code (sweep.hpp); here live what only a command line
// does: the options, signals, the progress bar, the sidecar and the optional MPI split.
#include <algorithm>
#include <chrono>
#include <cmath>
#include <csignal>
#include <ctime>
#include <exception>
#include <filesystem>
#include <numbers>
#include <optional>

#include <unistd.h>

#include <fmt/format.h>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "grain_options.hpp"
#include "holdfast/constants.hpp"
#include "holdfast/errors.hpp"
#include "holdfast/sweep.hpp"
#include "holdfast/version.hpp"
#include "sweep_cli.hpp"

namespace holdfast::cli {
namespace {

// The one piece of global state of the command: the signal that asked the run to stop. A
// handler may only set a flag of this type.
volatile std::sig_atomic_t stop_signal = 0;

extern "C" void on_stop_signal(int sig) {
    stop_signal = sig;
    // A second Ctrl-C kills at once, as usual: the run was already asked to stop.
    std::signal(sig, SIG_DFL);
}

// Installs the handlers for the duration of a run and restores the previous ones after.
class SignalGuard {
  public:
    SignalGuard() {
        stop_signal = 0;
        struct sigaction sa {};
        sa.sa_handler = on_stop_signal;
        sigemptyset(&sa.sa_mask);
        sa.sa_flags = SA_RESTART; // the writes of the calling thread carry on
        sigaction(SIGINT, &sa, &old_int_);
        sigaction(SIGTERM, &sa, &old_term_);
    }
    ~SignalGuard() {
        sigaction(SIGINT, &old_int_, nullptr);
        sigaction(SIGTERM, &old_term_, nullptr);
    }
    SignalGuard(const SignalGuard&) = delete;
    SignalGuard& operator=(const SignalGuard&) = delete;

  private:
    struct sigaction old_int_ {};
    struct sigaction old_term_ {};
};

std::string utc_now() {
    const std::time_t t = std::time(nullptr);
    std::tm tm{};
    gmtime_r(&t, &tm);
    char buf[32];
    std::strftime(buf, sizeof buf, "%Y-%m-%dT%H:%M:%SZ", &tm);
    return buf;
}

std::string duration_text(double seconds) {
    if (!std::isfinite(seconds) || seconds < 0) return "--:--";
    const auto s = static_cast<long long>(seconds + 0.5);
    if (s >= 3600) return fmt::format("{}:{:02}:{:02}", s / 3600, (s / 60) % 60, s % 60);
    return fmt::format("{}:{:02}", s / 60, s % 60);
}

struct SweepOptions {
    std::string file;
    std::string output;
    std::string threads;
    bool resume = false;
    std::string progress = "auto";
};

nlohmann::json spec_summary(const SweepSpec& spec) {
    nlohmann::json j;
    const SweepShape shape = sweep_shape(spec);
    j["rows"] = shape.rows();
    j["stars"] = nlohmann::json::array();
    for (const auto& s : spec.stars)
        j["stars"].push_back({{"label", s.label},
                              {"luminosity_Lsun", in_solar_luminosities(s.star.luminosity)},
                              {"star_mass_Msun", in_solar_masses(s.star.mass)},
                              {"teff_K", s.star.teff.value()},
                              {"star_radius_Rsun", in_solar_radii(s.star.radius)},
                              {"spectrum", s.star.spectrum->describe()}});
    j["materials"] = nlohmann::json::array();
    for (const auto& m : spec.materials)
        j["materials"].push_back({{"label", m.label},
                                  {"description", m.description},
                                  {"porosity", m.porosity},
                                  {"grain_density_g_cm3", in_g_per_cm3(m.density)},
                                  {"limits", m.limits}});
    j["orbits"] = nlohmann::json::array();
    for (const auto& o : spec.orbits)
        j["orbits"].push_back(
            {{"parent_eccentricity", o.eccentricity},
             {"release_true_anomaly_deg", o.true_anomaly_rad * 180.0 / std::numbers::pi},
             {"beta_crit", critical_beta(o)}});
    j["distances_au"] = nlohmann::json::array();
    for (double d : spec.distances_m)
        j["distances_au"].push_back(d / constants::au_m);
    j["radii_um"] = spec.radii_um;
    j["spectral_tolerance"] = spec.settings.spectral.relative_tolerance;
    j["out_of_band"] = out_of_band_name(spec.settings.out_of_band);
    return j;
}

nlohmann::json constants_json() {
    return {{"gravitational_constant_m3_kg_s2", constants::gravitational_constant_SI},
            {"speed_of_light_m_s", constants::speed_of_light_m_s},
            {"stefan_boltzmann_W_m2_K4", constants::stefan_boltzmann_SI},
            {"planck_J_s", constants::planck_J_s},
            {"boltzmann_J_K", constants::boltzmann_J_K},
            {"au_m", constants::au_m},
            {"solar_luminosity_W", constants::solar_luminosity_W},
            {"solar_mass_kg", constants::solar_mass_kg},
            {"solar_radius_m", constants::solar_radius_m},
            {"julian_year_s", constants::julian_year_s},
            {"source", "CODATA 2018; IAU 2012 B2 (au); IAU 2015 B3 (Sun)"}};
}

std::vector<std::string> sweep_assumptions(const SweepSpec& spec) {
    std::vector<std::string> a = {
        "Compact spheres, Mie theory averaged over the stellar spectrum (geometric optics with an "
        "edge correction above size parameter 1000), as holdfast beta",
        "Porosity as vacuum inclusions through an effective-medium rule; mixtures by the given "
        "rule (inclusions much smaller than the wavelength)",
        "Stellar spectra: Planck curves at T_eff unless a spectrum file is given; the star a "
        "uniformly bright disc",
        "Radiation pressure only: no stellar-wind drag, no Lorentz forces, no planets"};
    if (spec.has_distance_axis)
        a.push_back("temperature_K: one temperature throughout the grain, heated by starlight "
                    "only; pr_drag_time_yr: for a circular orbit at the distance");
    for (const auto& m : spec.materials)
        if (!m.limits.empty() && std::find(a.begin(), a.end(), m.limits) == a.end())
            a.push_back(m.limits);
    return a;
}

std::string sidecar_path(const std::string& csv) { return csv + ".json"; }

Report run_sweep_command(const SweepOptions& o, const SweepProcess& process) {
    if (o.output.empty()) throw InputError("--output: a sweep writes a CSV file: give -o OUT.csv");
    const unsigned threads = resolve_threads(o.threads);
    if (o.progress != "auto" && o.progress != "on" && o.progress != "off")
        throw InputError("--progress: cannot use '" + o.progress + "'. Accepted: auto, on, off");
    const std::string spec_text = read_text_file_checked(o.file);
    const SweepSpec spec = read_sweep_spec(o.file);
    const std::string header = sweep_csv_header(spec);
    const SweepShape shape = sweep_shape(spec);
    const std::string sidecar = sidecar_path(o.output);

    // The sidecar: written before the first row (so a killed run can be resumed) and again at
    // the end, always whole (temporary file and rename).
    nlohmann::json side;
    std::uint64_t first_row = 0;
    std::exception_ptr refused; // on the writer, before the other processes learn first_row
    if (process.is_writer()) try {
            if (o.resume) {
                std::string old_text;
                try {
                    old_text = read_text_file(sidecar);
                    side = nlohmann::json::parse(old_text);
                } catch (const std::exception& e) {
                    throw InputError("--resume: cannot use the sidecar '" + sidecar +
                                     "': " + e.what() +
                                     ". Accepted: the JSON file a previous run of this sweep wrote "
                                     "next to its CSV");
                }
                if (!side.contains("spec_text") || side["spec_text"] != spec_text)
                    throw InputError("--resume: the sweep file '" + o.file +
                                     "' is not the one the stopped run used (its text differs from "
                                     "the copy in '" +
                                     sidecar +
                                     "'): resuming would mix two "
                                     "sweeps. Run it afresh without --resume");
                if (!side.contains("holdfast_version") ||
                    side["holdfast_version"] != holdfast::version_string ||
                    side["git_hash"] != holdfast::git_hash)
                    throw InputError("--resume: '" + o.output +
                                     "' was written by another build of "
                                     "holdfast (" +
                                     side.value("holdfast_version", std::string("?")) + ", git " +
                                     side.value("git_hash", std::string("?")) +
                                     "): its rows might differ. Run it afresh without --resume");
                first_row = prepare_sweep_resume(o.output, header);
                side["resumed_utc"].push_back(utc_now());
            } else {
                side = {{"command", "sweep"},
                        {"holdfast_version", holdfast::version_string},
                        {"git_hash", holdfast::git_hash},
                        {"started_utc", utc_now()},
                        {"spec_file", o.file},
                        {"spec_text", spec_text},
                        {"csv", o.output},
                        {"csv_header", header.substr(0, header.size() - 1)},
                        {"row_order", "star, material, orbit, distance, grain radius (fastest)"},
                        {"spec", spec_summary(spec)},
                        {"constants", constants_json()},
                        {"assumptions", sweep_assumptions(spec)},
                        {"resumed_utc", nlohmann::json::array()}};
            }
            side["status"] = "running";
            side["rows_written"] = first_row;
            write_file_atomically(sidecar, side.dump(2) + "\n");
        } catch (...) {
            refused = std::current_exception();
        }
    // The other processes (MPI ranks) wait for the writer's start row, or learn it refused.
    constexpr std::uint64_t writer_refused = ~std::uint64_t(0);
    first_row = process.broadcast(refused ? writer_refused : first_row);
    if (refused) std::rethrow_exception(refused);
    if (first_row == writer_refused)
        throw InputError("the writing process (rank 0) refused the run: see its message");

    const bool show_progress =
        process.is_writer() &&
        (o.progress == "on" || (o.progress == "auto" && isatty(STDERR_FILENO)));
    const auto start = std::chrono::steady_clock::now();
    auto last_draw = start - std::chrono::seconds(1);
    std::uint64_t written = first_row;
    auto draw = [&](bool final) {
        const auto now = std::chrono::steady_clock::now();
        if (!final && now - last_draw < std::chrono::milliseconds(200)) return;
        last_draw = now;
        const double elapsed = std::chrono::duration<double>(now - start).count();
        const double rate = elapsed > 0 ? double(written - first_row) / elapsed : 0.0;
        const double frac = shape.rows() ? double(written) / double(shape.rows()) : 1.0;
        const int width = 30;
        const int filled = static_cast<int>(frac * width);
        std::string bar(std::size_t(filled), '#');
        bar.resize(width, '.');
        const double remaining = rate > 0 ? double(shape.rows() - written) / rate : -1.0;
        fmt::print(stderr, "\r[{}] {:5.1f}%  {}/{} rows  {:.4g} rows/s  {} left\x1b[K{}", bar,
                   100.0 * frac, written, shape.rows(), rate, duration_text(remaining),
                   final ? "\n" : "");
        std::fflush(stderr);
    };

    SweepOutcome outcome;
    int signal_seen = 0;
    std::string failure;
    {
        const SignalGuard guard;
        std::optional<SweepCsvWriter> writer;
        if (process.is_writer()) writer.emplace(o.output, !o.resume, header);
        SweepRunOptions run;
        run.threads = threads;
        run.first_row = first_row;
        run.stop_requested = [] { return stop_signal != 0; };
        try {
            outcome = process.run(spec, run, [&](const SweepChunk& chunk) {
                writer->write(chunk.text);
                written += chunk.rows;
                if (show_progress) draw(false);
            });
        } catch (const std::exception& e) {
            failure = e.what();
            if (show_progress) draw(true);
            if (process.is_writer()) {
                side["status"] = "failed: " + failure;
                side["rows_written"] = written;
                write_file_atomically(sidecar, side.dump(2) + "\n");
            }
            throw;
        }
        if (show_progress) draw(true);
        signal_seen = stop_signal;
    }
    const bool complete = process.is_writer() ? written == shape.rows() : !outcome.stopped;
    if (process.is_writer()) {
        side["status"] = complete ? "complete" : "stopped";
        side["rows_written"] = written;
        side["warnings"] = outcome.notes;
        if (complete) side["finished_utc"] = utc_now();
        write_file_atomically(sidecar, side.dump(2) + "\n");
    }
    if (!complete) {
        const char* name = signal_seen == SIGINT    ? "SIGINT"
                           : signal_seen == SIGTERM ? "SIGTERM"
                                                    : "a signal";
        if (!process.is_writer())
            throw StoppedBySignal(fmt::format("sweep stopped by {} on a computing process; the "
                                              "writing process (rank 0) reports the rows",
                                              name),
                                  signal_seen ? signal_seen : SIGTERM);
        throw StoppedBySignal(
            fmt::format("sweep stopped by {} after {} of {} rows; '{}' holds complete rows "
                        "only. Continue with: holdfast sweep {} -o {} --resume",
                        name, written, shape.rows(), o.output, o.file, o.output),
            signal_seen ? signal_seen : SIGTERM);
    }

    const double elapsed =
        std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    Report r;
    r.command = "sweep";
    r.parameters.push_back(text_entry("sweep file", "sweep_file", o.file));
    r.parameters.push_back(text_entry("CSV", "csv", o.output));
    r.parameters.push_back(text_entry("sidecar", "sidecar", sidecar));
    r.parameters.push_back(number_entry("threads", {{"threads", double(threads), ""}}));
    if (process.processes() > 1)
        r.parameters.push_back(
            number_entry("processes", {{"processes", double(process.processes()), ""}}));
    r.results.push_back(
        number_entry("rows in the grid", {{"rows_total", double(shape.rows()), ""}}));
    r.results.push_back(number_entry("rows written by this run",
                                     {{"rows_written", double(written - first_row), ""}}));
    if (o.resume)
        r.results.push_back(
            number_entry("rows kept from before", {{"rows_resumed_from", double(first_row), ""}}));
    r.results.push_back(number_entry("elapsed time", {{"elapsed_s", elapsed, "s"}}));
    r.results.push_back(number_entry(
        "rate",
        {{"rows_per_s", elapsed > 0 ? double(written - first_row) / elapsed : 0.0, "rows/s"}}));
    r.assumptions = sweep_assumptions(spec);
    r.warnings = outcome.notes;
    return r;
}

} // namespace

std::string read_text_file_checked(const std::string& path) {
    std::error_code ec;
    if (!std::filesystem::is_regular_file(path, ec))
        throw InputError("FILE: cannot use '" + path +
                         "': no such file. Accepted: the path of a sweep file (TOML)");
    return read_text_file(path);
}

Command setup_sweep(CLI::App& app) {
    CLI::App* sub = app.add_subcommand(
        "sweep", "Compute a grid over stars, materials, porosities, parent orbits, distances and "
                 "grain radii from a TOML sweep file, streamed to a CSV with a JSON sidecar");
    auto o = std::make_shared<SweepOptions>();
    sub->add_option("FILE", o->file, "The sweep file (TOML; see README 'The sweep file')")
        ->required();
    sub->add_option("-o,--output", o->output,
                    "The CSV to write (required). Unlike the other subcommands' --output, rows "
                    "stream into it as they are computed, flushed block by block; the sidecar "
                    "OUT.json records the run, and --resume continues a stopped one");
    add_threads_option(*sub, o->threads, "The CSV is the same for any number");
    sub->add_flag("--resume", o->resume,
                  "Continue a run that was stopped (SIGINT, SIGTERM, or killed): checks the "
                  "sidecar, cuts a partial last row and appends the missing rows");
    sub->add_option("--progress", o->progress,
                    "Progress bar on standard error: auto (when it is a terminal), on, off")
        ->default_val("auto");
    Command c;
    c.app = sub;
    // The summary of the run goes to standard output in --format; the CSV goes to --output.
    c.common = std::make_shared<CommonOptions>();
    sub->add_option("--format", c.common->format,
                    "Format of the run's summary on standard output: table, csv or json")
        ->default_val("table");
    c.run = [o] { return run_sweep_command(*o, current_sweep_process()); };
    return c;
}

} // namespace holdfast::cli
