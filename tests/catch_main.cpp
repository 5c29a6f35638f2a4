// Catch2 v2 main for every unit-test program. GSL's default error handler aborts the
// process; the library checks every GSL status itself, so tests run with it off, as the
// command line does.
#define CATCH_CONFIG_RUNNER
#include <catch2/catch.hpp>
#include <gsl/gsl_errno.h>

int main(int argc, char* argv[]) {
    gsl_set_error_handler_off();
    return Catch::Session().run(argc, argv);
}
