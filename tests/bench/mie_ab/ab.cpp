// Interleaved A/B timing of two versions of the Mie kernel (scripts/mie-ab builds it): the
// current src/core/mie.cpp ("new") and one from an earlier commit ("old", compiled into the
// namespace holdfast_old). Chunks of calls of the two alternate, so that the shared machine's
// drifts hit both alike; printed: least and median ns per call of each, and the median of
// the per-round ratios new/old. Not part of the build or of the tests.
// Usage: mie_ab N_REAL K_IMAG X [X ...]
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <vector>

void call_new(double re, double im, double x, double* out); // shim_new.cpp
void call_old(double re, double im, double x, double* out); // shim_old.cpp

int main(int argc, char** argv) {
    if (argc < 4) {
        std::fprintf(stderr, "usage: mie_ab N_REAL K_IMAG X [X ...]\n");
        return 2;
    }
    const double re = std::atof(argv[1]), im = std::atof(argv[2]);
    for (int a = 3; a < argc; ++a) {
        const double x = std::atof(argv[a]);
        // About 0.5-1 ms per chunk; fewer rounds for the slow large sizes.
        const int chunk = x <= 10 ? 2000 : std::max(4, static_cast<int>(20000 / x));
        const int rounds = x >= 1000 ? 60 : 200;
        std::vector<double> t_old, t_new, ratio;
        double out[8];
        volatile double sink = 0;
        for (int r = 0; r < rounds; ++r) {
            double t[2];
            for (int v = 0; v < 2; ++v) {
                const int which = (r & 1) ? 1 - v : v; // each goes first every other round
                const auto t0 = std::chrono::steady_clock::now();
                for (int k = 0; k < chunk; ++k) {
                    if (which)
                        call_new(re, im, x, out);
                    else
                        call_old(re, im, x, out);
                    sink = sink + out[0];
                }
                const auto t1 = std::chrono::steady_clock::now();
                t[which] = std::chrono::duration<double, std::nano>(t1 - t0).count() / chunk;
            }
            t_old.push_back(t[0]);
            t_new.push_back(t[1]);
            ratio.push_back(t[1] / t[0]);
        }
        const auto median = [](std::vector<double> v) {
            std::sort(v.begin(), v.end());
            return v[v.size() / 2];
        };
        const auto least = [](const std::vector<double>& v) {
            return *std::min_element(v.begin(), v.end());
        };
        std::printf("m = %g+%gi, x = %g: old least %.1f median %.1f ns | new least %.1f median "
                    "%.1f ns | new/old median %.3f\n",
                    re, im, x, least(t_old), median(t_old), least(t_new), median(t_new),
                    median(ratio));
    }
}
