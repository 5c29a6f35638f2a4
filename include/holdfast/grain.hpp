#pragma once
// Dust grains around a star: the ratio beta of radiation pressure to gravity versus grain
// radius, the blow-out radii for a parent body's orbit, the orbit a released grain takes,
// the Poynting-Robertson drag time, the equilibrium temperature and the sublimation distance.
//
// The efficiencies enter only through callables, so the physics here does not care whether
// <Q_pr> comes from Mie theory averaged over a spectrum or is a constant for comparison:
//   MeanEfficiency  radius_um      -> <Q_pr> (spectrum-weighted radiation-pressure efficiency)
//   PlanckMean      temperature_K  -> Planck-weighted mean absorption efficiency
// Everywhere "radius" is the grain's radius, never its diameter.
#include <atomic>
#include <functional>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "holdfast/material.hpp"
#include "holdfast/mie.hpp"
#include "holdfast/spectral_mean.hpp"
#include "holdfast/star.hpp"
#include "holdfast/units.hpp"

namespace holdfast {

// <Q_pr> of a grain of radius `radius_um` (micrometres), averaged over the stellar spectrum.
using MeanEfficiency = std::function<double(double radius_um)>;

// ---- beta ------------------------------------------------------------------------------------
// beta = F_rad / F_grav = 3 L <Q_pr> / (16 pi G M c rho s) for a compact sphere of radius s
// and bulk density rho (Burns, Lamy & Soter 1979, eq. 19). Independent of distance.
double beta(Power luminosity, Mass star_mass, MassDensity density, Length radius, double qpr_mean);

// beta as a function of grain radius for one star and one grain material.
class BetaModel {
  public:
    // Throws InputError unless luminosity, mass and density are positive and finite.
    BetaModel(Power luminosity, Mass star_mass, MassDensity density, MeanEfficiency qpr_mean);

    // <Q_pr>(s); throws NumericalError if the efficiency is not finite or negative.
    double qpr_mean_at_um(double radius_um) const;
    // The check qpr_mean_at_um makes, for a <Q_pr> computed elsewhere (a curve on threads).
    static void check_qpr_mean(double qpr_mean, double radius_um);
    // beta from an already computed <Q_pr> (saves a second spectral average).
    double beta_from_qpr(double qpr_mean, double radius_um) const;
    double beta_at_um(double radius_um) const;
    double beta(Length radius) const { return beta_at_um(in_micrometres(radius)); }

  private:
    double coefficient_kg_m2_; // 3 L / (16 pi G M c)
    double density_kg_m3_;
    MeanEfficiency qpr_mean_;
};

// ---- where the grain leaves its parent ---------------------------------------------------
// A parent body on a Kepler orbit of eccentricity e, releasing grains at true anomaly f
// (0 at pericentre, pi at apocentre) and at distance r from the star.
struct ReleasePoint {
    double eccentricity = 0.0;     // parent's orbit, in [0, 1)
    double true_anomaly_rad = 0.0; // any real number; only cos f and sin f matter
};

// Throws InputError unless 0 <= e < 1 and f is finite.
void check_release_point(const ReleasePoint& release);

// The smallest beta for which a grain released at `release` is unbound:
// beta_crit = (1 - e^2) / (2 (1 + e cos f)); 1/2 for a circular parent. See grain.cpp.
double critical_beta(const ReleasePoint& release);

// The Kepler orbit of a grain released with its parent's position and velocity, moving
// under the reduced attraction (1 - beta) G M. Bound orbits give a, e, pericentre and
// apocentre; unbound ones give the speed left at infinity (a grain with beta >= 1 feels a
// net push outwards and always escapes).
struct ReleasedOrbit {
    bool bound = false;
    std::optional<Length> semi_major_axis;     // bound only
    std::optional<double> eccentricity;        // bound only
    std::optional<Length> pericentre;          // bound only
    std::optional<Length> apocentre;           // bound only
    std::optional<Velocity> speed_at_infinity; // unbound only
};

// `distance` is the star-parent distance at release; throws InputError for a non-positive
// distance, a bad release point or a non-finite beta.
ReleasedOrbit released_orbit(Mass star_mass, double beta, const ReleasePoint& release,
                             Length distance);

// ---- Poynting-Robertson drag ----------------------------------------------------------------
// Time for a grain on a circular orbit of radius r to spiral into the star:
// t = c r^2 / (4 G M beta) (Wyatt & Whipple 1950; Burns, Lamy & Soter 1979, eq. 50).
// Throws InputError unless beta > 0.
Time poynting_robertson_time(Mass star_mass, Length distance, double beta);

// ---- blow-out search ------------------------------------------------------------------------
struct BlowoutSearchSettings {
    // Brent root search and minimisation stop when the bracket is this small in ln(radius),
    // that is a relative tolerance in radius.
    double radius_relative_tolerance = 1e-6;
    int max_iterations = 200;
};

struct BlowoutSearch {
    double beta_crit = 0.0;
    // Every radius (micrometres, ascending) where beta(s) - beta_crit changes sign between
    // neighbouring scan radii, refined by Brent's method.
    std::vector<double> blowout_radii_um;
    double beta_max = 0.0;
    double radius_at_beta_max_um = 0.0;
    // True when the largest beta sits at an end of the scanned range: the peak may then lie
    // outside it (for a constant <Q_pr> beta grows without bound as s -> 0).
    bool peak_at_range_edge = false;
};

// Scans beta at `scan_radii_um` (ascending, at least 2; the values `scan_beta` must already
// be computed there), brackets every sign change of beta - beta_crit and refines it with
// GSL's Brent root solver in ln(s); refines an interior maximum with GSL's Brent minimiser.
// Two crossings closer together than the scan spacing can be missed: use a fine grid.
// Throws InputError for a bad grid, NumericalError if GSL fails.
BlowoutSearch search_beta_curve(const std::function<double(double radius_um)>& beta_at_um,
                                std::span<const double> scan_radii_um,
                                std::span<const double> scan_beta, double beta_crit,
                                const BlowoutSearchSettings& settings = {});

// ---- temperature ---------------------------------------------------------------------------
// Planck mean of the absorption efficiency at a grain temperature:
// <Q_abs>_T = int Q_abs B_lambda(T) dlambda / int B_lambda(T) dlambda.
using PlanckMean = std::function<double(double temperature_K)>;

struct TemperatureSettings {
    double relative_tolerance = 1e-9; // on T, for the Brent root search in ln T
    int max_iterations = 200;
    double lowest_K = 1.0; // the search refuses temperatures outside this range
    double highest_K = 1.0e5;
    // The search also stops once |ln(emitted / absorbed)| is below this: the relative energy
    // balance residual, usually reached before the bracket is 1e-9 wide.
    double residual_tolerance = 1e-11;
};

// Fraction of the far-field flux L / (4 pi r^2) that a sphere at distance r from a
// uniformly bright star of radius R receives: 2 (r/R)^2 (1 - sqrt(1 - (R/r)^2)). It is 1 far
// from the star and 2 on its surface. Throws InputError unless r >= R > 0.
double finite_disc_factor(Length distance, Length star_radius);

// Equilibrium temperature from absorbed = emitted power:
//   <Q_abs>_* pi s^2 (L / 4 pi r^2) D = 4 pi s^2 <Q_abs>_T sigma T^4,
// where <Q_abs>_* is the spectrum-weighted absorption efficiency of the grain in the
// starlight, <Q_abs>_T its Planck mean at its own temperature T and D the finite-disc
// factor. Solved for T by GSL's Brent root search in ln T. Throws InputError for bad
// arguments, NumericalError if no temperature in the search range balances.
Temperature equilibrium_temperature(Power luminosity, Length star_radius, Length distance,
                                    double qabs_star_mean, const PlanckMean& qabs_planck_mean,
                                    const TemperatureSettings& settings = {});

// Distance at which the equilibrium temperature equals `sublimation_temperature`, the
// energy balance above solved for r in closed form. With K = 16 pi sigma T^4 <Q_abs>_T /
// (L <Q_abs>_*) and a = K R^2 / 2: r = R / sqrt(a (2 - a)), which is 1 / sqrt(K) far from the
// star. Empty when a > 1: the grain stays cooler than T even on the stellar surface.
// Throws InputError for bad arguments.
std::optional<Length> sublimation_distance(Power luminosity, Length star_radius,
                                           double qabs_star_mean,
                                           Temperature sublimation_temperature,
                                           double qabs_planck_mean_at_sublimation);

// A solved temperature and the relative energy-balance residual there,
// (emitted - absorbed) / absorbed = T^4 <Q_abs>_T / A(r) - 1, from the Planck mean the root
// search evaluated at exactly that temperature. The residual measures how well the root search
// balanced the two sides as the given PlanckMean computes them; it does not include that
// PlanckMean's own quadrature error (for planck_qabs_mean: within the spectral tolerance),
// which moves T by d ln T = -d ln<Q>_T / (4 + d ln<Q>_T / d ln T), a third to a sixth of it
// for the slopes of grains (between about -1 and 2).
struct TemperatureSolution {
    Temperature temperature;
    double balance_residual = 0.0;
};

// One grain's energy balance at many distances. The absorbed side does not depend on T and
// scales as D(r) / r^2, so it is fixed once per grain: A(r) = L <Q_abs>_* D(r) / (16 pi sigma r^2)
// in K^4, and the temperature solves T^4 <Q_abs>_T = A(r) (the balance of
// equilibrium_temperature, divided by 4 pi s^2 sigma).
class GrainTemperatureModel {
  public:
    // Throws InputError unless luminosity, star radius and <Q_abs>_* are positive and finite.
    GrainTemperatureModel(Power luminosity, Length star_radius, double qabs_star_mean,
                          PlanckMean qabs_planck_mean, TemperatureSettings settings = {});

    // A(r) in K^4; throws InputError for a distance inside the star.
    double absorbed_K4(Length distance) const;
    // The same result as equilibrium_temperature.
    Temperature temperature(Length distance) const;
    // Temperatures at several distances, in their order. Each root search after the first
    // starts from the previous solutions extrapolated in ln T against ln A(r), with a small
    // first bracket step, so a smooth curve costs about 4 Planck means per distance (tests/bench/
    // bench_temperature) instead of about 7 from scratch.
    std::vector<Temperature> temperatures(std::span<const Length> distances) const;
    // The same with each solution's residual (no further Planck mean).
    std::vector<TemperatureSolution> solve(std::span<const Length> distances) const;
    // (emitted - absorbed) / absorbed at `distance` for a grain at `temperature`:
    // T^4 <Q_abs>_T / A(r) - 1, with the Planck mean evaluated afresh. About 0 at the solution.
    double balance_residual(Length distance, Temperature temperature) const;
    // sublimation_distance() for this grain.
    std::optional<Length> sublimation_distance(Temperature sublimation_temperature) const;

  private:
    Power luminosity_;
    Length star_radius_;
    double qabs_star_mean_;
    PlanckMean planck_;
    TemperatureSettings settings_;
};

// ln(absorbed / emitted) for a grain at `distance` if it had `sublimation_temperature`:
// ln(L <Q_abs>_* D / (16 pi sigma r^2 T_sub^4 <Q_abs>_Tsub)). Positive where the equilibrium
// temperature exceeds T_sub (T^4 <Q_abs>_T grows with T for every grain of interest: the
// Planck mean falls no faster than T^-4), so its zeros in grain radius bound the radii that
// sublimate at that distance. Throws InputError for bad arguments.
double sublimation_margin(Power luminosity, Length star_radius, Length distance,
                          double qabs_star_mean, Temperature sublimation_temperature,
                          double qabs_planck_mean_at_sublimation);

// Radii (micrometres, ascending) where a margin function of radius is >= 0, from a scan grid:
// each interval's ends are the grid ends or sign changes refined by GSL's Brent solver in
// ln(s), to settings.radius_relative_tolerance. Two sign changes closer than the grid spacing
// can be missed.
struct RadiusIntervals {
    std::vector<double> from_um;
    std::vector<double> to_um;
    bool includes_smallest = false; // the first interval starts at the smallest scanned radius
    bool includes_largest = false;  // the last interval ends at the largest scanned radius
};
// `scan_margin` holds margin(s) at `scan_radii_um` (ascending, at least 2). Throws InputError
// for a bad grid, NumericalError if the margin is not finite or GSL fails.
RadiusIntervals positive_radius_intervals(const std::function<double(double radius_um)>& margin,
                                          std::span<const double> scan_radii_um,
                                          std::span<const double> scan_margin,
                                          const BlowoutSearchSettings& settings = {});

// ---- efficiencies from Mie theory (implemented in grain_optics.cpp) ----------------------------
// A spherical grain: homogeneous, or a core inside a concentric mantle.
struct GrainOptics {
    std::shared_ptr<const OpticalConstants> core;   // the whole grain when there is no mantle
    std::shared_ptr<const OpticalConstants> mantle; // null: a homogeneous sphere
    double core_radius_fraction = 1.0;              // core radius / grain radius, in (0, 1]
};

struct GrainEfficiencySettings {
    SpectralMeanSettings spectral;
    OutOfBand out_of_band = OutOfBand::refuse;
    // Large absorbing spheres. The series costs time in proportion to x = 2 pi s / lambda, so
    // above x_c = max(large_sphere_from_x, 1/k) a homogeneous sphere's Q_pr and Q_abs come from
    // geometric optics (mie_geometric_optics) plus an edge correction a/x + b x^(-4/3) whose
    // two coefficients are fitted to the series at x_c and 2 x_c for the same index. Measured
    // against the series up to x = 1e5 (tests/grain_optics_test.cpp): Q_pr within 3e-5 and
    // Q_abs within 6e-5 relative for k >= 1e-3, both within 1e-4 for k = 1e-4. Transparent spheres
    // (k = 0), coated spheres and indices where 2 x_c exceeds the series' range use the series
    // (geometric optics beyond its range). 0 turns the shortcut off.
    // The spectral means below (starlight_*_mean, planck_qabs_mean) use a fixed quadrature rule
    // for a wavelength-independent index and spectral.relative_tolerance >= 1e-7: there this
    // is where their smooth large-sphere models start (for every k, and for coated spheres),
    // rounded to the rule's panels; see src/core/grain_spectral_rule.cpp and README.
    double large_sphere_from_x = 1000.0;
};

// Throws InputError unless the optics are set and 0 < core fraction <= 1 (with a mantle).
void check_grain_optics(const GrainOptics& optics);

// Mie efficiencies of the grain at one wavelength (both in micrometres). Above the
// large-sphere threshold only q_pr and q_abs carry the edge correction (the other fields are
// plain geometric optics). Recomputes the edge fit at every call: the spectral means below
// cache it per refractive index.
MieEfficiencies grain_efficiencies(const GrainOptics& optics, double radius_um,
                                   double wavelength_um,
                                   const GrainEfficiencySettings& settings = {});

// <Q_pr>(s) over a spectrum, with the out-of-band choice applied once for all radii. With a
// wavelength-independent index the returned callable keeps every Q it computed (the fixed
// rule's panels are the same for every radius), so a curve of many radii costs little more
// than its largest one. Accurate to 1e-4 relative at the default tolerance (README).
// `curve` gives <Q> at many radii on several threads: the numbers `mean` gives, bit for bit,
// whatever the thread count (each thread works on its own caches; with a constant index the
// threads share out the panels in x first, and `mean` keeps them for later radii). `mean` and
// `curve` share state: call them from one thread at a time. When `stop` (may be null) turns
// true the threads finish the radius or panel they are on and the curve returns empty.
using MeanEfficiencyCurve = std::function<std::vector<double>(
    std::span<const double> radii_um, unsigned threads, const std::atomic<bool>* stop)>;
struct SpectralEfficiency {
    MeanEfficiency mean;                // radius_um -> <Q>
    MeanEfficiencyCurve curve;          // radii_um, threads -> <Q> at each radius
    WavelengthBand band;                // where the spectrum is integrated
    double dropped_flux_fraction = 0.0; // flux left out by OutOfBand::limit_band
    std::string note;                   // a sentence for the report, empty if nothing to say
};
SpectralEfficiency starlight_qpr_mean(const GrainOptics& optics,
                                      std::shared_ptr<const Spectrum> spectrum,
                                      const GrainEfficiencySettings& settings = {});
// The same for Q_abs, for the temperature balance.
SpectralEfficiency starlight_qabs_mean(const GrainOptics& optics,
                                       std::shared_ptr<const Spectrum> spectrum,
                                       const GrainEfficiencySettings& settings = {});

// Planck mean of Q_abs for a grain of radius `radius_um` as a function of its temperature
// (a Planck spectrum at that temperature, with the same out-of-band choice). The callable
// keeps Q_abs where it computed it: a constant index on the fixed rule's panels in x
// (FixedRuleCurve), any other grain (tabulated indices; tolerances below 1e-7) on nodes fixed
// in ln(lambda), built once per grain as temperatures ask for new bands, so each further
// temperature costs Planck values only (PlanckNodeRule in grain_spectral_rule.hpp; within the
// spectral tolerance of the adaptive quadrature, tests/planck_mean_test.cpp). Below the Mie
// series' x = 1e-6 Q_abs is the small-particle limit (mie_small_sphere).
PlanckMean planck_qabs_mean(const GrainOptics& optics, double radius_um,
                            const GrainEfficiencySettings& settings = {});

} // namespace holdfast
