// The sweep engine (sweep.hpp): spec errors name the key and the line, the grid's order and
// shape, rows against the core functions they come from, and the same bytes whatever the
// threads, the start row or the split across processes.
#include <catch2/catch.hpp>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <numbers>
#include <sstream>

#include "holdfast/constants.hpp"
#include "holdfast/errors.hpp"
#include "holdfast/sweep.hpp"

using namespace holdfast;

namespace {

SweepSpec spec_of(const std::string& text) { return parse_sweep_spec(text, "test.toml", ""); }

std::string run_all(const SweepSpec& spec, SweepRunOptions options = {}) {
    std::string out;
    std::uint64_t rows = 0;
    std::uint64_t next_row = options.first_row;
    const SweepOutcome o = run_sweep(spec, options, [&](const SweepChunk& c) {
        // Chunks arrive in order and without gaps.
        CHECK(c.first_row == next_row);
        next_row = c.first_row + c.rows;
        out += c.text;
        rows += c.rows;
    });
    CHECK(o.rows_delivered == rows);
    CHECK_FALSE(o.stopped);
    return out;
}

std::vector<std::vector<std::string>> csv_rows(const std::string& text) {
    std::vector<std::vector<std::string>> rows;
    std::istringstream in(text);
    std::string line;
    while (std::getline(in, line)) {
        std::vector<std::string> cells;
        std::string cell;
        std::istringstream l(line);
        while (std::getline(l, cell, ','))
            cells.push_back(cell);
        rows.push_back(cells);
    }
    return rows;
}

// Small but with every axis: 2 stars (one sharing the Sun's spectrum), 3 materials, 2 orbits.
const char* small_spec = R"(
quantities = ["qpr_mean", "beta", "bound", "blowout_radii"]
radii = "0.02um..20um"
points = 12

[[star]]
preset = "sun"

[[star]]
label = "bright sun"
luminosity = "2 Lsun"
mass = "1 Msun"
teff = "5772 K"

[[material]]
name = "silicate"
porosity = [0, 0.5]

[[material]]
index = "1.9+0.7i"
density = "2 g/cm3"

[[orbit]]
eccentricity = [0, 0.4]
release = "apocentre"
)";

} // namespace

TEST_CASE("sweep spec errors name the file, the line and the key", "[sweep]") {
    struct Case {
        std::string toml;
        const char* where; // expected start of the message
        const char* what;  // and a word of the reason
    };
    const auto c = GENERATE(values<Case>(
        {Case{"radii = \"0.1um..1um\"\ncolour = 1\n", "test.toml:2: colour:", "unknown key"},
         Case{"radii = \"0.1kg..1kg\"\n", "test.toml:1: radii:", "mass"},
         Case{"radii = 3\n", "test.toml:1: radii:", "integer"},
         Case{"points = 1\nradii = \"0.1um..1um\"\n", "test.toml:1: points:", "out of range"},
         Case{"radii = \"0.1um..1um\"\n[[star]]\nluminosity = \"2 Lsun\"\nmass = \"2 s\"\n"
              "teff = \"6000 K\"\n[[material]]\nname = \"silicate\"\n",
              "test.toml:4: star[1].mass:", "mass"},
         Case{"radii = \"0.1um..1um\"\n[[star]]\npreset = \"sun\"\n[[material]]\n"
              "name = \"silicate\"\nporosity = [0.2, 1.0]\n",
              "test.toml:6: material[1].porosity[2]:", "out of range"},
         Case{"radii = \"0.1um..1um\"\n[[star]]\npreset = \"vega\"\n[[material]]\n"
              "name = \"silicate\"\n",
              "test.toml:3: star[1].preset:", "unknown preset"},
         Case{"radii = \"0.1um..1um\"\n[[star]]\npreset = \"sun\"\n[[material]]\n"
              "index = \"1.5+0.1i\"\n",
              "test.toml:4: material[1]:", "density"},
         Case{"radii = \"0.1um..1um\"\n[[star]]\npreset = \"sun\"\n[[material]]\n"
              "name = \"silicate\"\ndensty = \"3 g/cm3\"\n",
              "test.toml:6: material[1].densty:", "unknown key"},
         Case{"quantities = [\"beta\", \"speed\"]\nradii = \"0.1um..1um\"\n",
              "test.toml:1: quantities[2]:", "unknown quantity"},
         Case{"quantities = [\"temperature\"]\nradii = \"0.1um..1um\"\ndistances = \"1 g\"\n"
              "[[star]]\npreset = \"sun\"\n[[material]]\nname = \"silicate\"\n",
              "test.toml:3: distances:", "length"},
         Case{"radii = \"0.1um..1um\"\n[[star]]\npreset = \"sun\"\n[[material]]\n"
              "name = \"silicate\"\n[[orbit]]\neccentricity = 0.3\n",
              "test.toml:6: orbit:", "no quantity depends"},
         Case{"quantities = [\"bound\"]\nradii = \"0.1um..1um\"\n[[star]]\npreset = \"sun\"\n"
              "[[material]]\nname = \"silicate\"\n[[orbit]]\neccentricity = 1.5\n",
              "test.toml:8: orbit[1].eccentricity:", "out of range"},
         Case{"radii = \"0.1um..1um\n", "test.toml:1:", "not valid TOML"}}));
    CAPTURE(c.toml);
    try {
        (void)spec_of(c.toml);
        FAIL("no error");
    } catch (const InputError& e) {
        const std::string msg = e.what();
        CAPTURE(msg);
        CHECK(msg.rfind(c.where, 0) == 0);
        CHECK(msg.find(c.what) != std::string::npos);
    }
}

TEST_CASE("sweep grid: shape, header and row order", "[sweep]") {
    const SweepSpec spec = spec_of(small_spec);
    const SweepShape shape = sweep_shape(spec);
    CHECK(shape.stars == 2);
    CHECK(shape.materials == 3); // silicate at two porosities, the index
    CHECK(shape.orbits == 2);
    CHECK(shape.distances == 1);
    CHECK(shape.radii == 12);
    CHECK(shape.rows() == 2 * 3 * 2 * 12);
    CHECK(sweep_csv_header(spec) ==
          "star,luminosity_Lsun,star_mass_Msun,teff_K,material,porosity,grain_density_g_cm3,"
          "parent_eccentricity,release_true_anomaly_deg,beta_crit,grain_radius_um,qpr_mean,beta,"
          "bound,blowout_radii_um\n");
    const auto rows = csv_rows(run_all(spec));
    REQUIRE(rows.size() == shape.rows());
    // Radius fastest, then orbit, material, star.
    CHECK(rows[0][0] == "sun");
    CHECK(rows[1][10] != rows[0][10]);
    CHECK(rows[12][7] == "0.4");
    CHECK(rows[24][5] == "0.5");
    CHECK(rows[72][0] == "bright sun");
    // Porous silicate: density scaled by 1 - P = 0.5 (3.3 g/cm3 solid, tables/materials).
    CHECK(rows[24][6] == "1.65");
    // beta_crit = (1 - e^2) / (2 (1 + e cos f)) at apocentre, f = pi: (1 + e)/2 = 0.7 (analytic).
    CHECK(rows[12][9] == "0.7");
}

TEST_CASE("sweep rows agree with the core functions they come from", "[sweep]") {
    const SweepSpec spec = spec_of(small_spec);
    const auto rows = csv_rows(run_all(spec));
    // beta = 3 L <Q_pr> / (16 pi G M c rho s) (Burns, Lamy & Soter 1979, eq. 19), written out
    // here from constants.hpp: an identity. Tolerance 2e-9: both sides are printed or parsed
    // through 10 significant digits.
    for (const auto& r : rows) {
        const double L = std::stod(r[1]) * constants::solar_luminosity_W;
        const double M = std::stod(r[2]) * constants::solar_mass_kg;
        const double rho = std::stod(r[6]) * 1e3;
        const double s = std::stod(r[10]) * 1e-6;
        const double q = std::stod(r[11]);
        const double expected = 3.0 * L * q /
                                (16.0 * std::numbers::pi * constants::gravitational_constant_SI *
                                 M * constants::speed_of_light_m_s * rho * s);
        const double b = std::stod(r[12]);
        REQUIRE(std::isfinite(b));
        CHECK(b == Approx(expected).epsilon(2e-9));
        CHECK((r[13] == "true") == (b < std::stod(r[9])));
    }
    // <Q_pr> does not depend on the luminosity: the bright sun shares the Sun's spectral means.
    for (std::size_t i = 0; i < 72; ++i)
        CHECK(rows[i][11] == rows[i + 72][11]);
    // And equals the spectral mean computed directly for silicate (the same code path as
    // holdfast beta: exact equality of the printed digits).
    const Star sun_star = sun();
    GrainEfficiencySettings settings;
    settings.spectral.relative_tolerance = 1e-5;
    const Material silicate = shipped_material("silicate");
    const SpectralEfficiency e =
        starlight_qpr_mean({silicate.optics, nullptr, 1.0}, sun_star.spectrum, settings);
    for (std::size_t i = 0; i < 12; ++i)
        CHECK(rows[i][11] == sweep_number(e.mean(spec.radii_um[i])));
    // The blow-out radii bracket the radii that are not bound (circular parent, beta_crit 1/2).
    const std::string blowout = rows[0][14];
    REQUIRE(blowout != "none");
    const double low = std::stod(blowout.substr(0, blowout.find(';')));
    const double high = std::stod(blowout.substr(blowout.find(';') + 1));
    for (std::size_t i = 0; i < 12; ++i) {
        const double s = std::stod(rows[i][10]);
        CHECK((rows[i][13] == "false") == (s > low && s < high));
    }
}

TEST_CASE("sweep temperatures and drag times agree with the core functions", "[sweep]") {
    const SweepSpec spec = spec_of(R"(
quantities = ["qabs_mean", "temperature", "beta", "pr_drag_time"]
radii = "0.1um..10um"
points = 3
distances = "1au..10au"
distance_points = 2
[[star]]
preset = "sun"
[[material]]
index = "1.9+0.7i"
density = "2 g/cm3"
)");
    CHECK(sweep_csv_header(spec).find("distance_au,grain_radius_um,qabs_mean,temperature_K,beta,"
                                      "pr_drag_time_yr") != std::string::npos);
    const auto rows = csv_rows(run_all(spec));
    REQUIRE(rows.size() == 6);
    const GrainOptics optics{constant_index({1.9, 0.7}), nullptr, 1.0};
    for (const auto& r : rows) {
        const double d_au = std::stod(r[7]);
        const double s_um = std::stod(r[8]);
        const double qabs = std::stod(r[9]);
        const Temperature t =
            equilibrium_temperature(sun().luminosity, sun().radius, metres(d_au * constants::au_m),
                                    qabs, planck_qabs_mean(optics, s_um, spec.settings));
        // Identity with the core's balance; 1e-8: qabs went through 10 printed digits.
        CHECK(std::stod(r[10]) == Approx(t.value()).epsilon(1e-8));
        // Wyatt & Whipple 1950: t = c r^2 / (4 G M beta), an identity here; 2e-9 as above.
        const double r_m = d_au * constants::au_m;
        const double t_yr = constants::speed_of_light_m_s * r_m * r_m /
                            (4.0 * constants::gravitational_constant_SI * constants::solar_mass_kg *
                             std::stod(r[11])) /
                            constants::julian_year_s;
        CHECK(std::stod(r[12]) == Approx(t_yr).epsilon(2e-9));
    }
}

TEST_CASE("sweep output does not depend on threads, start row or process split", "[sweep]") {
    const SweepSpec spec = spec_of(small_spec);
    const std::string one = run_all(spec);
    // The stars share one spectrum, so blocks of the second star wait for curves the first
    // star's blocks compute: every window size, from one block to the default, must deliver
    // all rows in order.
    for (unsigned t : {2u, 3u, 4u}) {
        for (std::size_t window : {0u, 1u, 2u}) {
            SweepRunOptions o;
            o.threads = t;
            o.window = window;
            CHECK(run_all(spec, o) == one);
        }
    }
    // Resuming at any row (block boundary, inside a block, the last row) gives the rest.
    std::vector<std::size_t> starts_at;
    for (std::size_t i = 0, pos = 0; pos < one.size(); ++i) {
        starts_at.push_back(pos);
        pos = one.find('\n', pos) + 1;
    }
    for (std::uint64_t first :
         {std::uint64_t(1), std::uint64_t(24), std::uint64_t(30), std::uint64_t(143)}) {
        SweepRunOptions o;
        o.threads = 2;
        o.first_row = first;
        CHECK(run_all(spec, o) == one.substr(starts_at[first]));
    }
    // Two processes taking alternate blocks, merged by block index.
    std::map<std::uint64_t, std::string> blocks;
    for (std::uint64_t rank = 0; rank < 2; ++rank) {
        SweepRunOptions o;
        o.block_stride = 2;
        o.block_offset = rank;
        run_sweep(spec, o, [&](const SweepChunk& c) {
            CHECK(c.block % 2 == rank);
            blocks[c.block] = c.text;
        });
    }
    std::string merged;
    for (const auto& [b, text] : blocks)
        merged += text;
    CHECK(merged == one);
}

TEST_CASE("a sweep of fewer curves than threads shares each curve's radii", "[sweep]") {
    // One star and one material: a single curve, computed on all the threads at once, with
    // the temperature's Q_abs curve too.
    const SweepSpec spec = spec_of(R"(
quantities = ["qpr_mean", "qabs_mean", "beta", "blowout_radii", "temperature"]
radii = "0.01um..100um"
points = 40
distances = ["1 au", "3 au"]

[[star]]
preset = "sun"

[[material]]
name = "carbon"
)");
    const std::string one = run_all(spec);
    for (unsigned t : {2u, 3u}) {
        SweepRunOptions o;
        o.threads = t;
        CHECK(run_all(spec, o) == one);
    }
}

TEST_CASE("a stop request ends the run at a block boundary", "[sweep]") {
    const SweepSpec spec = spec_of(small_spec);
    const std::string one = run_all(spec);
    std::string got;
    int delivered = 0;
    SweepRunOptions o;
    o.threads = 2;
    o.stop_requested = [&] { return delivered >= 2; };
    const SweepOutcome out = run_sweep(spec, o, [&](const SweepChunk& c) {
        got += c.text;
        ++delivered;
    });
    CHECK(out.stopped);
    CHECK(out.rows_delivered == 48); // two blocks of 2 orbits x 12 radii
    CHECK(got == one.substr(0, got.size()));
}

TEST_CASE("preparing a stopped CSV for resume cuts a partial last row", "[sweep]") {
    const auto dir = std::filesystem::temp_directory_path();
    const std::string path = (dir / "holdfast_sweep_test_resume.csv").string();
    const std::string header = "a,b\n";
    {
        std::ofstream f(path, std::ios::binary | std::ios::trunc);
        f << header << "1,2\n3,4\n5,";
    }
    CHECK(prepare_sweep_resume(path, header) == 2);
    CHECK(read_text_file(path) == "a,b\n1,2\n3,4\n");
    CHECK(prepare_sweep_resume(path, header) == 2);
    // Killed while writing the header: back to the header alone.
    {
        std::ofstream f(path, std::ios::binary | std::ios::trunc);
        f << "a,";
    }
    CHECK(prepare_sweep_resume(path, header) == 0);
    CHECK(read_text_file(path) == header);
    // Another sweep's file is refused.
    CHECK_THROWS_AS(prepare_sweep_resume(path, "x,y\n"), InputError);
    std::filesystem::remove(path);
    CHECK_THROWS_AS(prepare_sweep_resume(path, header), InputError);
}
