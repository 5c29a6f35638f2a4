// Invented optical-constant tables shared by the tests of tabulated spectral means: a nearly
// transparent ice-like material, n rising from 1.31 to 1.33 with a small alternating wiggle
// at the rows (so the kinks at table rows matter) and k rising log-linearly from 1e-8 over
// `a factor `k_span`. Test data only, not a measurement.
#pragma once

#include <cmath>
#include <cstddef>
#include <string>
#include <utility>
#include <vector>

#include "holdfast/material.hpp"
#include "holdfast/parse.hpp"

namespace holdfast::testing {

inline NkTable transparent_nk_table(double high_um, int rows, double k_span, std::string source) {
    NkTable t;
    t.source = std::move(source);
    t.format = "in memory";
    const std::vector<double> wl = log_spaced(0.1, high_um, rows);
    for (std::size_t i = 0; i < wl.size(); ++i) {
        const double f = static_cast<double>(i) / static_cast<double>(wl.size() - 1);
        const double wiggle = (i % 2 == 0 ? 1.0 : -1.0) * 5e-4;
        t.rows.push_back({wl[i], 1.31 + 0.02 * f + wiggle, 1e-8 * std::pow(k_span, f)});
    }
    return t;
}

} // namespace holdfast::testing
