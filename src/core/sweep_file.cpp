// The sweep's CSV file: appended in whole chunks and flushed after each, and prepared for
// --resume (header checked, a partial last line cut, complete rows counted).
#include <cerrno>
#include <cstring>
#include <filesystem>
#include <fstream>

#include "holdfast/errors.hpp"
#include "holdfast/sweep.hpp"

namespace holdfast {

std::uint64_t prepare_sweep_resume(const std::string& csv_path, const std::string& header) {
    namespace fs = std::filesystem;
    std::error_code ec;
    if (!fs::is_regular_file(csv_path, ec))
        throw InputError("--resume: cannot use '" + csv_path +
                         "': no such file. Accepted: the CSV of a stopped run");
    std::ifstream in(csv_path, std::ios::binary);
    if (!in) throw InputError("--resume: cannot read '" + csv_path + "'");
    std::string first;
    std::getline(in, first);
    const bool header_complete = !in.eof();
    std::uint64_t keep = 0; // bytes to keep
    std::uint64_t rows = 0;
    if (!header_complete) {
        // Stopped while writing the header: start again from an empty file.
        if (!std::string_view(header).starts_with(first))
            throw InputError("--resume: '" + csv_path +
                             "' does not start with this sweep's "
                             "header: it belongs to another sweep");
        keep = 0;
    } else {
        if (first + "\n" != header)
            throw InputError("--resume: '" + csv_path +
                             "' has another header than this sweep "
                             "file gives:\n  file:  " +
                             first + "\n  sweep: " + header.substr(0, header.size() - 1));
        keep = header.size();
        std::string line;
        while (std::getline(in, line)) {
            if (in.eof()) break; // no newline after it: a row cut by a kill
            keep += line.size() + 1;
            ++rows;
        }
    }
    in.close();
    if (keep == 0) {
        std::ofstream out(csv_path, std::ios::binary | std::ios::trunc);
        out << header;
        if (!out) throw InputError("--resume: cannot write '" + csv_path + "'");
        return 0;
    }
    fs::resize_file(csv_path, keep, ec);
    if (ec)
        throw InputError("--resume: cannot cut the partial last row of '" + csv_path +
                         "': " + ec.message());
    return rows;
}

SweepCsvWriter::SweepCsvWriter(const std::string& path, bool truncate, const std::string& header)
    : path_(path) {
    file_ = std::fopen(path.c_str(), truncate ? "wb" : "ab");
    if (!file_) throw InputError("--output: cannot write '" + path + "': " + std::strerror(errno));
    if (truncate) write(header);
}

SweepCsvWriter::~SweepCsvWriter() {
    if (file_) std::fclose(file_);
}

void SweepCsvWriter::write(std::string_view text) {
    if (std::fwrite(text.data(), 1, text.size(), file_) != text.size() || std::fflush(file_) != 0)
        throw InputError("--output: writing '" + path_ + "' failed: " + std::strerror(errno));
}

} // namespace holdfast
