#pragma once
// One error hierarchy for the whole library. The command line maps each kind to an exit
// status (see README, "Exit status"): input and data-file errors are the user's to fix
// (exit 2), numerical and internal errors are ours (exit 1).
#include <stdexcept>
#include <string>

namespace holdfast {

struct Error : std::runtime_error {
    using std::runtime_error::runtime_error;
};

// A value the caller gave is not acceptable (wrong unit, out of range, malformed).
struct InputError : Error {
    using Error::Error;
};

// A data file (optical constants, spectrum, sweep) cannot be read or is inconsistent.
struct DataFileError : InputError {
    using InputError::InputError;
};

// A computation failed: quadrature or root search did not converge, a result is not finite.
struct NumericalError : Error {
    using Error::Error;
};

// A broken invariant: a bug in holdfast, never the user's fault.
struct InternalError : Error {
    using Error::Error;
};

} // namespace holdfast
