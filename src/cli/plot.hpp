#pragma once
// Plots for the command line, drawn by gnuplot (Debian package gnuplot-nox): the program is
// looked up on PATH when asked for; holdfast does not need it otherwise. The image is written
// to a temporary file beside the target and renamed, so a failed run leaves no file.
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace holdfast::cli {

enum class PlotFormat { svg, png };

// Checks that `path` ends in .svg or .png and that gnuplot is on PATH. Throws InputError
// naming `option` otherwise (exit status 2, before any computation starts).
PlotFormat check_plot_request(const std::string& path, std::string_view option);

struct PlotSeries {
    std::string title;
    std::vector<double> x;
    std::vector<double> y;
};

// A log-log line plot with optional horizontal reference line and vertical markers.
struct LogLogPlot {
    std::string title;
    std::string x_label;
    std::string y_label;
    std::vector<PlotSeries> series;
    std::vector<PlotSeries> dashed_series; // comparison curves, drawn dashed in grey
    std::optional<double> horizontal_line; // e.g. beta_crit
    std::string horizontal_label;
    std::vector<double> vertical_marks; // e.g. blow-out radii
};

// Runs gnuplot and writes the image to `path` atomically. Throws InputError if the folder is
// not writable, NumericalError (exit 1) with gnuplot's own message if gnuplot fails.
void write_plot(const std::string& path, const LogLogPlot& plot, std::string_view option);

} // namespace holdfast::cli
