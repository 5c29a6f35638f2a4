#include "plot.hpp"

#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <random>
#include <sstream>

#include <fcntl.h>
#include <spawn.h>
#include <sys/wait.h>
#include <unistd.h>

#include <fmt/format.h>

#include "holdfast/errors.hpp"

extern char** environ;

namespace holdfast::cli {
namespace {

namespace fs = std::filesystem;

std::optional<fs::path> find_gnuplot() {
    const char* path = std::getenv("PATH");
    if (!path) return std::nullopt;
    std::stringstream dirs(path);
    std::string dir;
    while (std::getline(dirs, dir, ':')) {
        if (dir.empty()) continue;
        const fs::path candidate = fs::path(dir) / "gnuplot";
        if (::access(candidate.c_str(), X_OK) == 0) return candidate;
    }
    return std::nullopt;
}

bool ends_with(const std::string& s, std::string_view suffix) {
    return s.size() >= suffix.size() &&
           s.compare(s.size() - suffix.size(), suffix.size(), suffix.data(), suffix.size()) == 0;
}

// Inside gnuplot's double-quoted strings a backslash and a double quote need escaping.
std::string quoted(const std::string& s) {
    std::string out = "\"";
    for (char c : s) {
        if (c == '\\' || c == '"') out += '\\';
        if (c == '\n') {
            out += "\\n";
            continue;
        }
        out += c;
    }
    return out + "\"";
}

std::string random_suffix() {
    std::random_device rd;
    return fmt::format("{:08x}", rd());
}

std::string read_head(const fs::path& p, std::size_t limit) {
    std::ifstream f(p);
    std::string text((std::istreambuf_iterator<char>(f)), std::istreambuf_iterator<char>());
    if (text.size() > limit) text = text.substr(0, limit) + "...";
    while (!text.empty() && (text.back() == '\n' || text.back() == ' '))
        text.pop_back();
    return text;
}

struct RemoveOnExit {
    std::vector<fs::path> paths;
    ~RemoveOnExit() {
        std::error_code ec;
        for (const auto& p : paths)
            fs::remove(p, ec);
    }
};

} // namespace

PlotFormat check_plot_request(const std::string& path, std::string_view option) {
    PlotFormat format;
    if (ends_with(path, ".svg") || ends_with(path, ".SVG"))
        format = PlotFormat::svg;
    else if (ends_with(path, ".png") || ends_with(path, ".PNG"))
        format = PlotFormat::png;
    else
        throw InputError(fmt::format("{}: cannot use '{}': the file type is not known. Accepted: "
                                     "a file name ending in .svg or .png",
                                     option, path));
    const fs::path target(path);
    const fs::path dir = target.has_parent_path() ? target.parent_path() : fs::path(".");
    if (!fs::is_directory(dir))
        throw InputError(fmt::format("{}: cannot use '{}': the folder '{}' does not exist", option,
                                     path, dir.string()));
    if (!find_gnuplot())
        throw InputError(fmt::format(
            "{}: cannot draw '{}': the program gnuplot is not on PATH. Install it (Debian: "
            "apt-get install gnuplot-nox) or leave out {}",
            option, path, option));
    return format;
}

void write_plot(const std::string& path, const LogLogPlot& plot, std::string_view option) {
    const PlotFormat format = check_plot_request(path, option);
    const fs::path gnuplot = *find_gnuplot();
    const fs::path target(path);
    const fs::path dir = target.has_parent_path() ? target.parent_path() : fs::path(".");
    const std::string tag = random_suffix();
    const fs::path image = dir / fmt::format(".{}.tmp-{}", target.filename().string(), tag);
    std::error_code ec;
    const fs::path scratch = fs::temp_directory_path(ec);
    const fs::path script = (ec ? dir : scratch) / fmt::format("holdfast-plot-{}.gp", tag);
    const fs::path log = (ec ? dir : scratch) / fmt::format("holdfast-plot-{}.log", tag);
    RemoveOnExit cleanup{{image, script, log}};

    std::string s;
    if (format == PlotFormat::svg)
        s += "set terminal svg size 800,560 dynamic enhanced font \"sans,12\" background "
             "\"white\"\n";
    else
        s += "set terminal pngcairo size 1000,700 enhanced font \"sans,11\"\n";
    // gnuplot single-quoted strings take '' for a quote.
    std::string out_name;
    for (char c : image.string())
        out_name += (c == '\'') ? std::string("''") : std::string(1, c);
    s += "set output '" + out_name + "'\n";
    s += "set logscale xy\nset format x \"10^{%L}\"\nset format y \"10^{%L}\"\n";
    s += "set grid\nset key top right box opaque\n";
    s += "set title " + quoted(plot.title) + " noenhanced\n";
    s += "set xlabel " + quoted(plot.x_label) + "\n";
    s += "set ylabel " + quoted(plot.y_label) + "\n";
    for (double x : plot.vertical_marks)
        s += fmt::format("set arrow from {:.10g}, graph 0 to {:.10g}, graph 1 nohead dt 3 lc rgb "
                         "\"gray40\"\n",
                         x, x);
    std::string plot_cmd = "plot ";
    // Red is kept for the horizontal line.
    const char* colours[] = {"#1f77b4", "#2ca02c", "#9467bd", "#8c564b", "#ff7f0e",
                             "#17becf", "#e377c2", "#7f7f7f", "#bcbd22", "#000080"};
    const std::size_t n_colours = sizeof colours / sizeof colours[0];
    std::size_t index = 0;
    auto add_series = [&](const PlotSeries& ser, const std::string& style) {
        s += fmt::format("$d{} << EOD\n", index);
        for (std::size_t k = 0; k < ser.x.size() && k < ser.y.size(); ++k)
            if (ser.x[k] > 0 && ser.y[k] > 0)
                s += fmt::format("{:.10g} {:.10g}\n", ser.x[k], ser.y[k]);
        s += "EOD\n";
        plot_cmd += fmt::format("{}$d{} using 1:2 with lines {} title {}", index ? ", " : "", index,
                                style, quoted(ser.title));
        ++index;
    };
    for (std::size_t i = 0; i < plot.series.size(); ++i)
        add_series(plot.series[i], fmt::format("lw 2 lc rgb \"{}\"", colours[i % n_colours]));
    for (const auto& ser : plot.dashed_series)
        add_series(ser, "dt 4 lw 1.5 lc rgb \"gray30\"");
    if (plot.horizontal_line)
        plot_cmd += fmt::format(", {:.10g} with lines dt 2 lw 1.5 lc rgb \"#d62728\" title {}",
                                *plot.horizontal_line, quoted(plot.horizontal_label));
    s += plot_cmd + "\n";

    {
        std::ofstream f(script);
        f << s;
        if (!f)
            throw InputError(
                fmt::format("{}: cannot write gnuplot's script '{}'", option, script.string()));
    }

    posix_spawn_file_actions_t actions;
    posix_spawn_file_actions_init(&actions);
    posix_spawn_file_actions_addopen(&actions, 0, "/dev/null", O_RDONLY, 0);
    posix_spawn_file_actions_addopen(&actions, 1, log.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0600);
    posix_spawn_file_actions_adddup2(&actions, 1, 2);
    const std::string prog = gnuplot.string();
    const std::string script_arg = script.string();
    std::vector<char*> argv{const_cast<char*>(prog.c_str()), const_cast<char*>(script_arg.c_str()),
                            nullptr};
    pid_t pid = 0;
    const int rc = posix_spawn(&pid, prog.c_str(), &actions, nullptr, argv.data(), environ);
    posix_spawn_file_actions_destroy(&actions);
    if (rc != 0)
        throw NumericalError(
            fmt::format("{}: cannot start gnuplot ({}): {}", option, prog, std::strerror(rc)));
    int status = 0;
    while (::waitpid(pid, &status, 0) < 0)
        if (errno != EINTR)
            throw NumericalError(
                fmt::format("{}: lost track of gnuplot: {}", option, std::strerror(errno)));
    const bool ok = WIFEXITED(status) && WEXITSTATUS(status) == 0;
    if (!ok || !fs::exists(image) || fs::file_size(image, ec) == 0)
        throw NumericalError(
            fmt::format("{}: gnuplot failed to draw '{}': {}", option, path, read_head(log, 600)));
    fs::rename(image, target, ec);
    if (ec) throw InputError(fmt::format("{}: cannot create '{}': {}", option, path, ec.message()));
}

} // namespace holdfast::cli
