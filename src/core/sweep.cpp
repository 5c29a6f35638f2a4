// The sweep engine: the grid's rows in a fixed order, computed by a pool of std::threads, the
// spectral means of each (material, spectrum) curve computed once and shared, blocks handed to
// the caller strictly in order.
//
// Why std::thread and not OpenMP or oneTBB: the work is a short queue of coarse blocks (one
// per star and material, milliseconds to seconds each) that must come out in order, stop
// cleanly on request and pass exceptions back to the caller. A hand-written pool of a few
// threads with one mutex and condition variable does all of that in standard C++, with no
// runtime or build dependency; OpenMP's worksharing cannot stop early or carry exceptions out
// of a parallel region, and oneTBB's work stealing buys nothing at this granularity.
//
// Determinism: every number in a row is computed from that row's inputs alone. The curves'
// internal caches (grain_spectral_rule.cpp) keep values that do not depend on the order in
// which radii are asked for, so a row's text is the same whichever thread computes it and
// whatever it computed before.
#include <algorithm>
#include <atomic>
#include <charconv>
#include <chrono>
#include <cmath>
#include <condition_variable>
#include <exception>
#include <map>
#include <mutex>
#include <numbers>
#include <optional>
#include <thread>
#include <unordered_map>

#include "holdfast/errors.hpp"
#include "holdfast/sweep.hpp"

namespace holdfast {
namespace {

// Thrown inside a worker when a stop was requested: abandons the block it was computing.
struct Stopped {};

bool wants(const SweepSpec& spec, SweepQuantity q) {
    for (auto x : spec.quantities)
        if (x == q) return true;
    return false;
}

std::string csv_text(const std::string& s) {
    if (s.find_first_of(",\"\n\r") == std::string::npos) return s;
    std::string out = "\"";
    for (char ch : s) {
        if (ch == '"') out += '"';
        out += ch;
    }
    return out + "\"";
}

// One (material, spectrum) curve: the spectral means at every radius of the grid, computed once
// by the first block that needs them. `qpr_fn` is also used for the blow-out search between
// grid radii; it keeps caches that are not thread-safe, so it is used under `mutex` only.
struct Curve {
    std::mutex mutex;
    bool done = false;
    MeanEfficiency qpr_fn;
    std::vector<double> qpr, qabs;
    std::vector<std::string> notes;
};

class Engine {
  public:
    // `threads`: the pool's size. With fewer curves than threads each curve's radii are also
    // shared out between threads (SpectralEfficiency::curve), so a sweep of one or two
    // curves still keeps every core busy.
    Engine(const SweepSpec& spec, const std::atomic<bool>& stop, unsigned threads)
        : spec_(spec), stop_(stop) {
        shape_ = sweep_shape(spec);
        need_qpr_ = wants(spec, SweepQuantity::qpr_mean) || wants(spec, SweepQuantity::beta) ||
                    wants(spec, SweepQuantity::bound) ||
                    wants(spec, SweepQuantity::blowout_radii) ||
                    wants(spec, SweepQuantity::pr_drag_time);
        need_qabs_ =
            wants(spec, SweepQuantity::qabs_mean) || wants(spec, SweepQuantity::temperature);
        // Stars with the same spectrum share one curve per material.
        std::map<std::string, std::size_t> spectra;
        for (const auto& s : spec.stars)
            star_spectrum_.push_back(spectra.emplace(s.spectrum_key, spectra.size()).first->second);
        spectra_ = spectra.size();
        curves_ = std::vector<Curve>(spectra_ * spec.materials.size());
        curve_threads_ = static_cast<unsigned>(
            std::max<std::size_t>(1, threads / std::max<std::size_t>(1, curves_.size())));
    }

    // Worker-local state: the Planck means for the temperature balance (they keep caches that
    // are not thread-safe), per material and radius.
    struct Local {
        std::unordered_map<std::size_t, std::vector<PlanckMean>> planck;
    };

    // Rows of block `block` from global row `first_row` on.
    SweepChunk block(std::uint64_t block, std::uint64_t first_row, Local& local) {
        const std::size_t s = block / shape_.materials, m = block % shape_.materials;
        const SweepStar& star = spec_.stars[s];
        const SweepMaterial& mat = spec_.materials[m];
        Curve& c = curve(curve_of(block), star, mat);
        const std::vector<double>& radii = spec_.radii_um;
        const std::size_t n = radii.size();

        const MeanEfficiency locked = [&c](double radius_um) {
            const std::lock_guard<std::mutex> lock(c.mutex);
            return c.qpr_fn(radius_um);
        };
        std::vector<double> beta(n, 0.0);
        std::optional<BetaModel> model;
        if (need_qpr_) {
            model.emplace(star.star.luminosity, star.star.mass, mat.density, locked);
            for (std::size_t i = 0; i < n; ++i)
                beta[i] = model->beta_from_qpr(c.qpr[i], radii[i]);
        }

        const std::string prefix =
            csv_text(star.label) + "," + sweep_number(in_solar_luminosities(star.star.luminosity)) +
            "," + sweep_number(in_solar_masses(star.star.mass)) + "," +
            sweep_number(star.star.teff.value()) + "," + csv_text(mat.label) + "," +
            sweep_number(mat.porosity) + "," + sweep_number(in_g_per_cm3(mat.density)) + ",";

        SweepChunk out;
        out.block = block;
        const std::uint64_t block_first = block * shape_.rows_per_block();
        std::uint64_t row = block_first;
        out.first_row = std::max(first_row, block_first);
        const std::size_t distances = spec_.has_distance_axis ? spec_.distances_m.size() : 1;
        for (const ReleasePoint& orbit : spec_.orbits) {
            const double bc = critical_beta(orbit);
            std::string orbit_cells;
            if (spec_.has_orbit_axis)
                orbit_cells = sweep_number(orbit.eccentricity) + "," +
                              sweep_number(orbit.true_anomaly_rad * 180.0 / std::numbers::pi) +
                              "," + sweep_number(bc) + ",";
            std::string blowout;
            const std::uint64_t orbit_rows = distances * n;
            if (row + orbit_rows <= first_row) { // resumed past this orbit's rows
                row += orbit_rows;
                continue;
            }
            if (wants(spec_, SweepQuantity::blowout_radii)) {
                const std::function<double(double)> beta_fn = [&](double r) {
                    check_stop();
                    return model->beta_at_um(r);
                };
                const BlowoutSearch search = search_beta_curve(beta_fn, radii, beta, bc);
                for (double r : search.blowout_radii_um)
                    blowout += (blowout.empty() ? "" : ";") + sweep_number(r);
                if (blowout.empty()) blowout = "none";
            }
            for (std::size_t d = 0; d < distances; ++d) {
                if (row + n <= first_row) {
                    row += n;
                    continue;
                }
                check_stop();
                const double dist_m = spec_.has_distance_axis ? spec_.distances_m[d] : 0.0;
                std::vector<PlanckMean>* planck = nullptr;
                if (wants(spec_, SweepQuantity::temperature)) {
                    auto& v = local.planck[m];
                    if (v.empty()) {
                        v.resize(n);
                        for (std::size_t i = 0; i < n; ++i)
                            v[i] = planck_qabs_mean(mat.optics, radii[i], spec_.settings);
                    }
                    planck = &v;
                }
                for (std::size_t i = 0; i < n; ++i, ++row) {
                    if (row < first_row) continue;
                    std::string& t = out.text;
                    t += prefix;
                    t += orbit_cells;
                    if (spec_.has_distance_axis) t += sweep_number(dist_m / constants::au_m) + ",";
                    t += sweep_number(radii[i]);
                    for (SweepQuantity q : spec_.quantities) {
                        t += ',';
                        switch (q) {
                        case SweepQuantity::qpr_mean:
                            t += sweep_number(c.qpr[i]);
                            break;
                        case SweepQuantity::qabs_mean:
                            t += sweep_number(c.qabs[i]);
                            break;
                        case SweepQuantity::beta:
                            t += sweep_number(beta[i]);
                            break;
                        case SweepQuantity::bound:
                            t += beta[i] < bc ? "true" : "false";
                            break;
                        case SweepQuantity::blowout_radii:
                            t += blowout;
                            break;
                        case SweepQuantity::temperature:
                            t += sweep_number(
                                temperature(star, mat, c.qabs[i], (*planck)[i], dist_m));
                            break;
                        case SweepQuantity::pr_drag_time:
                            t += sweep_number(in_julian_years(
                                poynting_robertson_time(star.star.mass, metres(dist_m), beta[i])));
                            break;
                        }
                    }
                    t += '\n';
                    ++out.rows;
                }
            }
        }
        return out;
    }

    // The curve block `block` needs (blocks of stars with one spectrum share it), and how many.
    std::size_t curve_of(std::uint64_t block) const {
        const std::size_t s = block / shape_.materials, m = block % shape_.materials;
        return star_spectrum_[s] * spec_.materials.size() + m;
    }
    std::size_t curves() const { return curves_.size(); }

    std::vector<std::string> notes() {
        std::vector<std::string> all;
        for (auto& c : curves_) {
            const std::lock_guard<std::mutex> lock(c.mutex);
            for (const auto& note : c.notes)
                if (std::find(all.begin(), all.end(), note) == all.end()) all.push_back(note);
        }
        return all;
    }

  private:
    void check_stop() const {
        if (stop_.load(std::memory_order_relaxed)) throw Stopped{};
    }

    static double temperature(const SweepStar& star, const SweepMaterial& mat, double qabs_star,
                              const PlanckMean& planck, double distance_m) {
        if (!(qabs_star > 0.0))
            throw InputError("temperature: the material '" + mat.label +
                             "' absorbs no starlight (<Q_abs> = 0, a transparent material): it "
                             "has no equilibrium temperature. Use a material with k > 0");
        return equilibrium_temperature(star.star.luminosity, star.star.radius, metres(distance_m),
                                       qabs_star, planck)
            .value();
    }

    Curve& curve(std::size_t id, const SweepStar& star, const SweepMaterial& mat) {
        Curve& c = curves_[id];
        const std::lock_guard<std::mutex> lock(c.mutex);
        if (c.done) return c;
        const std::size_t n = spec_.radii_um.size();
        if (need_qpr_) {
            SpectralEfficiency e =
                starlight_qpr_mean(mat.optics, star.star.spectrum, spec_.settings);
            if (!e.note.empty()) c.notes.push_back(e.note);
            c.qpr_fn = std::move(e.mean);
            c.qpr = e.curve(spec_.radii_um, curve_threads_, &stop_);
            check_stop();
            for (std::size_t i = 0; i < n; ++i)
                BetaModel::check_qpr_mean(c.qpr[i], spec_.radii_um[i]);
        }
        if (need_qabs_) {
            SpectralEfficiency e =
                starlight_qabs_mean(mat.optics, star.star.spectrum, spec_.settings);
            if (!e.note.empty() && c.notes.empty()) c.notes.push_back(e.note);
            c.qabs = e.curve(spec_.radii_um, curve_threads_, &stop_);
            check_stop();
            for (std::size_t i = 0; i < n; ++i) {
                if (!std::isfinite(c.qabs[i]) || c.qabs[i] < 0.0)
                    throw NumericalError("the spectral mean of Q_abs is not finite and >= 0 at " +
                                         sweep_number(spec_.radii_um[i]) + " um");
            }
        }
        c.done = true;
        return c;
    }

    const SweepSpec& spec_;
    const std::atomic<bool>& stop_;
    SweepShape shape_;
    bool need_qpr_ = false, need_qabs_ = false;
    std::vector<std::size_t> star_spectrum_;
    std::size_t spectra_ = 0;
    std::vector<Curve> curves_;
    unsigned curve_threads_ = 1;
};

} // namespace

SweepShape sweep_shape(const SweepSpec& spec) {
    SweepShape s;
    s.stars = spec.stars.size();
    s.materials = spec.materials.size();
    s.orbits = spec.orbits.size();
    s.distances = spec.has_distance_axis ? spec.distances_m.size() : 1;
    s.radii = spec.radii_um.size();
    return s;
}

std::string sweep_number(double v) {
    char buf[64];
    const auto r = std::to_chars(buf, buf + sizeof buf, v, std::chars_format::general, 10);
    return std::string(buf, r.ptr);
}

std::string sweep_csv_header(const SweepSpec& spec) {
    std::string h = "star,luminosity_Lsun,star_mass_Msun,teff_K,material,porosity,"
                    "grain_density_g_cm3,";
    if (spec.has_orbit_axis) h += "parent_eccentricity,release_true_anomaly_deg,beta_crit,";
    if (spec.has_distance_axis) h += "distance_au,";
    h += "grain_radius_um";
    for (SweepQuantity q : spec.quantities) {
        switch (q) {
        case SweepQuantity::qpr_mean:
            h += ",qpr_mean";
            break;
        case SweepQuantity::qabs_mean:
            h += ",qabs_mean";
            break;
        case SweepQuantity::beta:
            h += ",beta";
            break;
        case SweepQuantity::bound:
            h += ",bound";
            break;
        case SweepQuantity::blowout_radii:
            h += ",blowout_radii_um";
            break;
        case SweepQuantity::temperature:
            h += ",temperature_K";
            break;
        case SweepQuantity::pr_drag_time:
            h += ",pr_drag_time_yr";
            break;
        }
    }
    return h + "\n";
}

SweepOutcome run_sweep(const SweepSpec& spec, const SweepRunOptions& options,
                       const std::function<void(const SweepChunk&)>& deliver) {
    if (options.threads < 1) throw InputError("--threads: at least one thread is needed");
    if (options.block_stride < 1 || options.block_offset >= options.block_stride)
        throw InternalError("run_sweep: block_offset must be below block_stride");
    const SweepShape shape = sweep_shape(spec);
    SweepOutcome outcome;
    const std::uint64_t rpb = shape.rows_per_block();
    if (rpb == 0 || options.first_row >= shape.rows()) return outcome;

    // This process's blocks, in order.
    std::vector<std::uint64_t> mine;
    for (std::uint64_t b = options.first_row / rpb; b < shape.blocks(); ++b)
        if (b % options.block_stride == options.block_offset) mine.push_back(b);

    std::atomic<bool> stop{false};
    Engine engine(spec, stop, options.threads);
    // Blocks held ahead of the one being delivered. Many, so that a thread is not left idle
    // while another computes a costly block that delivery waits for (a block that computes a
    // curve can cost as much as hundreds that reuse one), but no more than about 64 MiB of
    // CSV text at ~128 bytes per row.
    const std::size_t by_memory = std::size_t((64u << 20) / std::max<std::uint64_t>(1, 128 * rpb));
    const std::size_t window =
        options.window ? options.window
                       : std::clamp<std::size_t>(by_memory, 4 * std::size_t(options.threads),
                                                 64 * std::size_t(options.threads));

    // Scheduling: a worker takes the first block in the window that it can start at once, that
    // is whose curve is computed or not yet started (then it computes it). A block whose curve
    // another worker is computing waits: taking it would only block on that curve.
    enum class CurveState : char { untouched, computing, done };
    std::mutex mutex;
    std::condition_variable cv;
    std::size_t first_open = 0, delivered = 0;
    std::vector<char> taken(mine.size(), 0);
    std::vector<CurveState> curve_state(engine.curves(), CurveState::untouched);
    std::map<std::size_t, SweepChunk> ready;
    std::exception_ptr error;

    // Under `mutex`: the block to take next, or mine.size() if none can start now.
    auto next_block = [&]() -> std::size_t {
        while (first_open < mine.size() && taken[first_open])
            ++first_open;
        const std::size_t end = std::min(mine.size(), delivered + window);
        for (std::size_t k = first_open; k < end; ++k)
            if (!taken[k] && curve_state[engine.curve_of(mine[k])] != CurveState::computing)
                return k;
        return mine.size();
    };

    auto worker = [&] {
        Engine::Local local;
        for (;;) {
            std::size_t k = mine.size();
            {
                std::unique_lock<std::mutex> lock(mutex);
                cv.wait(lock, [&] {
                    return stop.load() || error || (k = next_block()) < mine.size() ||
                           first_open >= mine.size();
                });
                if (stop.load() || error || k >= mine.size()) return;
                taken[k] = 1;
                CurveState& cs = curve_state[engine.curve_of(mine[k])];
                if (cs == CurveState::untouched) cs = CurveState::computing;
            }
            try {
                SweepChunk chunk = engine.block(mine[k], options.first_row, local);
                const std::lock_guard<std::mutex> lock(mutex);
                curve_state[engine.curve_of(mine[k])] = CurveState::done;
                ready.emplace(k, std::move(chunk));
            } catch (const Stopped&) {
                return;
            } catch (...) {
                const std::lock_guard<std::mutex> lock(mutex);
                if (!error) error = std::current_exception();
                stop.store(true);
            }
            cv.notify_all();
        }
    };
    std::vector<std::thread> pool;
    pool.reserve(options.threads);
    for (unsigned t = 0; t < options.threads; ++t)
        pool.emplace_back(worker);

    // The calling thread delivers in order, and polls the stop request while it waits.
    auto finish = [&] {
        stop.store(true);
        cv.notify_all();
        for (auto& t : pool)
            t.join();
    };
    try {
        while (delivered < mine.size()) {
            SweepChunk chunk;
            {
                std::unique_lock<std::mutex> lock(mutex);
                while (!ready.count(delivered) && !error) {
                    if (options.stop_requested && options.stop_requested()) {
                        outcome.stopped = true;
                        break;
                    }
                    cv.wait_for(lock, std::chrono::milliseconds(50));
                }
                if (error || outcome.stopped) break;
                chunk = std::move(ready.at(delivered));
                ready.erase(delivered);
                ++delivered;
            }
            cv.notify_all();
            deliver(chunk);
            outcome.rows_delivered += chunk.rows;
            if (delivered < mine.size() && options.stop_requested && options.stop_requested()) {
                outcome.stopped = true;
                break;
            }
        }
    } catch (...) {
        finish();
        throw;
    }
    finish();
    if (error) std::rethrow_exception(error);
    outcome.notes = engine.notes();
    return outcome;
}

} // namespace holdfast
