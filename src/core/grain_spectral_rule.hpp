#pragma once
// Private to holdfast_core: the fixed quadrature rule for spectrum-averaged grain efficiencies
// (grain_spectral_rule.cpp explains the method and its measured accuracy; grain_optics.cpp
// decides when it is used).
#include <array>
#include <atomic>
#include <complex>
#include <cstddef>
#include <functional>
#include <memory>
#include <optional>
#include <span>
#include <unordered_map>
#include <vector>

#include "holdfast/grain.hpp"

namespace holdfast::detail {

// How fine the fixed rule is; fixed_rule_density maps a relative tolerance to it (the
// defaults are for 1e-5; grain_spectral_rule.cpp gives the measured accuracy).
struct FixedRuleDensity {
    // Width in ln(x) of the coarse panels: every panel of the rule is one of these or a
    // subdivision of one. Where Q is smooth (x below 2, no resonances yet; above the
    // large-sphere limit, smooth models) they are used whole.
    double coarse_ln_width = 0.0625;
    // Narrowest subdivision where a weakly absorbing sphere has resonances (x from 2 to the
    // large-sphere limit): there the panels are 12 k wide in ln x, but not below this.
    double ripple_ln_width = 0.00125;
    // Panels no longer than this many interference periods pi / nu in x.
    double periods_per_panel = 0.5;
    // The large-sphere model's window averages (EdgeFit): panels of this many periods, windows
    // of 8 periods but at least this wide in ln x. The wavelength rule (tabulated indices),
    // which builds a model for many indices, uses 1 period and no floor (see there).
    double window_periods_per_panel = 0.5;
    double window_ln_floor = 0.02;
};

FixedRuleDensity fixed_rule_density(double relative_tolerance);

// Tolerances tighter than this use the adaptive quadrature (spectral_mean.cpp) throughout.
inline constexpr double fixed_rule_tightest_tolerance = 1e-7;

// Efficiencies Q_pr and Q_abs of one grain as the fixed rule integrates them: the exact series
// up to the large-sphere limit, smooth models above it (see grain_spectral_rule.cpp).
class SmoothedGrainQ {
  public:
    // `large_x` 0: the exact series at every size (geometric optics beyond its range).
    // Otherwise it is rounded to a coarse-panel edge and raised to at least 100.
    SmoothedGrainQ(GrainOptics optics, double large_x, FixedRuleDensity density);

    struct Value {
        double q_pr = 0.0;
        double q_abs = 0.0;
    };
    Value at(double wavelength_um, double x);
    // The large-sphere model at x >= large_x() (at() gives it only above large_x(); this also
    // at large_x() itself). Throws InternalError when there is no model (large_x() == 0).
    Value model_at(double wavelength_um, double x);
    // The geometric-optics part of that model: geometric optics of the homogeneous sphere (or
    // of the mantle where it hides the core), 0 for a coated sphere whose core shows.
    Value geometric_at(double wavelength_um, double x) const;

    // For curves on several threads, which share one large-sphere model instead of each
    // building its own. prepare_shared_model creates the homogeneous sphere's model at
    // `wavelength_um` (a constant index has only that one), not yet filled in; false when there
    // is none to share (no large-sphere limit, or a coated grain, whose models grow as they are
    // used). share_models_with hands this object's models to `other`, built alike.
    // complete_models fills in everything at() above large_x() may need, after which at() only
    // reads them; it must happen before another thread uses them (model_at() at or below
    // large_x() may still fill them in: not for sharing).
    bool prepare_shared_model(double wavelength_um);
    void share_models_with(SmoothedGrainQ& other);
    void complete_models();

    const GrainOptics& optics() const { return optics_; }
    double large_x() const { return large_x_; }
    const FixedRuleDensity& density() const { return density_; }

    struct EdgeFit;    // geometric optics + R(x) / x, R from window averages of the series
    struct CoatedGrid; // window averages of the coated series on a log grid in x

  private:
    struct IndexKey {
        double core_re, core_im, mantle_re, mantle_im;
        bool operator==(const IndexKey&) const = default;
    };
    struct IndexKeyHash {
        std::size_t operator()(const IndexKey& k) const noexcept;
    };

    // `model`: the large-sphere model even at x <= large_x_.
    Value homogeneous(std::complex<double> m, double x, bool model = false);
    Value coated(std::complex<double> m_core, std::complex<double> m_mantle, double x,
                 bool model = false);

    GrainOptics optics_;
    double large_x_;
    FixedRuleDensity density_;
    std::unordered_map<IndexKey, std::shared_ptr<EdgeFit>, IndexKeyHash> fits_;
    std::unordered_map<IndexKey, std::shared_ptr<CoatedGrid>, IndexKeyHash> grids_;
};

// The panels for one band: the density, the largest interference rate nu = max(|n - 1|, 0.1)
// and the resonance panel width from the smallest k over the band and the grain's components,
// and whether the index is the same at every wavelength (then Q depends on x alone).
struct FixedRuleLattice {
    FixedRuleDensity density;
    double nu = 0.1;
    double ripple_ln_width = 0.00125;
    bool constant_index = false;
    double smallest_k = 0.0;
    double reference_wavelength_um = 1.0; // inside the band
    bool operator==(const FixedRuleLattice& o) const {
        return nu == o.nu && ripple_ln_width == o.ripple_ln_width &&
               constant_index == o.constant_index &&
               density.coarse_ln_width == o.density.coarse_ln_width &&
               density.ripple_ln_width == o.density.ripple_ln_width &&
               density.periods_per_panel == o.density.periods_per_panel;
    }
};
FixedRuleLattice fixed_rule_lattice(const SmoothedGrainQ& q, const WavelengthBand& band);

// Whether the fixed rule is the quick choice: with a constant index every Q is computed once
// per curve. An index that varies with wavelength would need Q afresh at every radius, on
// panels that resolve the interference structure, and the large-sphere model fitted afresh
// at every wavelength above the large-sphere limit: WavelengthRuleCurve below is built for
// that case.
bool fixed_rule_suits(const FixedRuleLattice& lattice);

struct FixedRuleMeans {
    double q_pr = 0.0;
    double q_abs = 0.0;
};

// <Q_pr>(s) and <Q_abs>(s) for one grain and one lattice: composite Gauss-Legendre in ln(x) on
// panels fixed in x. With a constant index each coarse panel's Q is computed once and kept as
// its product-integration weights (so a further radius costs 8 spectrum values per coarse
// panel); otherwise Q is computed afresh at every radius.
class FixedRuleCurve {
  public:
    FixedRuleCurve(std::shared_ptr<SmoothedGrainQ> q, FixedRuleLattice lattice);

    // Panels are also cut at the kinks of tabulated optical constants (breakpoints_um) and at
    // `extra_kinks_um`. Throws InputError for a radius that is not positive and finite,
    // NumericalError if the spectrum has no flux in the band or a mean is not finite.
    FixedRuleMeans means(const Spectrum& spectrum, const WavelengthBand& band, double radius_um,
                         const std::vector<double>& extra_kinks_um = {});

    const FixedRuleLattice& lattice() const { return lattice_; }

    // Filling the panel cache on several threads (starlight means of a whole curve): each
    // thread owns a curve built alike (its own SmoothedGrainQ, whose caches are not
    // thread-safe), computes the panels it takes from a shared counter, and afterwards the
    // curves adopt each other's panels. A panel's values depend on its index alone, so every
    // curve then gives the same means, bit for bit, as one curve filled serially.
    // The coarse panels means() will need at these radii that this curve has not computed,
    // ascending (none unless the index is constant): those above the large-sphere limit,
    // which need its model (one thread computes them, building the model once), and the rest.
    struct MissingPanels {
        std::vector<long> model, series;
    };
    MissingPanels missing_panels(const WavelengthBand& band,
                                 std::span<const double> radii_um) const;
    // Computes panels for one of several threads, each panel taken from its list's counter,
    // until all are taken or `stop` (may be null) turns true: the model panels (once
    // `model_ready`) before the series panels, both from the most costly (largest x) down.
    // A thread that runs out of series panels waits for `model_ready`.
    struct PanelCounters {
        std::atomic<std::size_t> model{0}, series{0};
    };
    void compute_panels(const MissingPanels& panels, PanelCounters& next,
                        const std::atomic<bool>& model_ready, const std::atomic<bool>* stop);
    // Copies the panels `other` (the same lattice) has and this one lacks.
    void adopt_panels(const FixedRuleCurve& other);
    SmoothedGrainQ& grain_q() { return *q_; }

  private:
    static constexpr int points = 8; // Gauss-Legendre points per panel
    struct Coarse {
        int subdivisions = 1;
        std::vector<double> q_pr, q_abs;            // at the fine nodes
        std::array<double, points> w_pr{}, w_abs{}; // product-integration weights
    };
    int subdivisions(long j) const;
    const Coarse& coarse(long j);
    Coarse compute_coarse(long j);
    // The coarse panels [first, last] that means() visits for one radius.
    std::pair<long, long> panel_range(const WavelengthBand& band, double radius_um) const;

    std::shared_ptr<SmoothedGrainQ> q_;
    FixedRuleLattice lattice_;
    long j_ripple_, j_top_; // coarse panels [j_ripple_, j_top_) have resonances
    std::unordered_map<long, Coarse> cache_;
};

// <Q_pr>(s) and <Q_abs>(s) for a grain whose index varies with wavelength (tabulated optical
// constants, mixtures of them): composite Gauss-Legendre in ln(lambda) on panels cut at the
// table's rows and sized for the interference structure and resonances at each radius, with
// the large-sphere models interpolated between indices on a lattice fixed in wavelength. See
// grain_wavelength_rule.cpp for the method and its measured accuracy.
class WavelengthRuleCurve {
  public:
    // `q` carries the optics (defined over `band`) and the density. Throws InputError for a
    // band that is not a range 0 < low < high.
    WavelengthRuleCurve(std::shared_ptr<SmoothedGrainQ> q, WavelengthBand band,
                        const std::vector<double>& extra_kinks_um = {});

    // Throws InputError for a radius that is not positive and finite, NumericalError if the
    // spectrum has no flux in the band or a mean is not finite.
    FixedRuleMeans means(const Spectrum& spectrum, double radius_um);

    // Q evaluations of the series and of the lattice models so far (for tests and benchmarks).
    std::size_t evaluations() const { return evaluations_; }

  private:
    struct Segment {
        double u0 = 0.0, u1 = 0.0; // ln(lambda / um)
        double nu = 0.1;           // max(|n - 1|, 0.1) over the segment
        double k_min = 0.0;        // smallest k over the segment
    };
    SmoothedGrainQ::Value model(double u, double x);
    // The model's geometric-optics part (geometric) or the rest at lattice wavelength j and
    // size parameter exp(i h).
    const SmoothedGrainQ::Value& lattice_value(bool geometric, long j, long i);

    std::shared_ptr<SmoothedGrainQ> q_;
    WavelengthBand band_;
    std::vector<Segment> segments_;
    // Lattice steps in ln(lambda) for the geometric-optics part of the large-sphere models and
    // for the rest.
    double geometric_step_ = 0.0625, rest_step_ = 0.25;
    using Column = std::unordered_map<long, SmoothedGrainQ::Value>;
    std::unordered_map<long, Column> geometric_, rest_;
    std::size_t evaluations_ = 0;
};

// Planck means <Q_abs>_T of one grain at many temperatures (planck_qabs_mean for indices the
// constant-index FixedRuleCurve does not take). Q_abs(lambda) does not depend on T, so it is
// evaluated once per grain on fixed composite 8-point Gauss-Legendre panels in u = ln(lambda),
// built lazily over the bands that temperatures ask for, and each mean is a weighted sum of
// Planck values at the nodes. Panels start at the coarse lattice j h, cut at kinks (table
// rows, `kinks_um`) and at the optics' range, no wider than the wavelength rule's resonance
// and interference widths there (WavelengthRuleCurve), and are bisected until the degree-7
// interpolant through a panel's 8 values reproduces Q_abs at both halves' 16 nodes to
// `relative_tolerance` of the panel's mean |Q_abs| (the halves are kept). A cell inside the
// band then costs 8 spectrum values, through product-integration weights as FixedRuleCurve's.
// See grain_spectral_rule.cpp for the error this leaves in the mean.
class PlanckNodeRule {
  public:
    // `q_abs(wavelength_um)` is the grain's Q_abs; `optics` gives its index (for the panel
    // widths), kinks and wavelength range.
    PlanckNodeRule(const GrainOptics& optics, double radius_um,
                   std::function<double(double wavelength_um)> q_abs, FixedRuleDensity density,
                   double relative_tolerance, const std::vector<double>& kinks_um);

    // <Q_abs> over `band` (inside the optics' range) weighted by `spectrum`. Panels cut by the
    // band's ends are integrated on 8 fresh nodes with Q_abs from the panel's interpolant.
    double mean(const Spectrum& spectrum, const WavelengthBand& band);

    // Q_abs evaluations so far (for tests and benchmarks).
    std::size_t evaluations() const { return evaluations_; }

  private:
    struct Panel {
        double a = 0.0, b = 0.0; // ln(lambda / um)
        std::array<double, 8> q{};
    };
    // A coarse cell [a, b] (clipped to the optics' range), its panels, and int Q_abs L_k du
    // over it for the Lagrange basis L_k of the cell's own 8 Gauss nodes (product-integration
    // weights: a cell inside the band costs 8 spectrum values).
    struct Cell {
        double a = 0.0, b = 0.0;
        std::vector<Panel> panels;
        std::array<double, 8> w{};
    };
    const Cell& cell(long j);
    std::array<double, 8> values(double a, double b);
    void refine(const Panel& p, int depth, std::vector<Panel>& out);
    double initial_width(double a, double b) const;

    GrainOptics optics_;
    double radius_um_;
    std::function<double(double)> q_abs_;
    FixedRuleDensity density_;
    double tolerance_;
    std::vector<double> kinks_u_; // sorted ln(lambda) of the kinks
    double u_min_, u_max_;        // the optics' range (infinite ends for an open range)
    std::unordered_map<long, Cell> cells_;
    std::size_t evaluations_ = 0;
};

} // namespace holdfast::detail
