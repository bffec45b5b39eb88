// bootstrap.cpp -- the wild cluster bootstrap test of one term (weft_test_bootstrap).
// The statistics live in core (weft/bootstrap.hpp); this file checks arguments, maps
// errors to status codes and copies the result.
#include "boundary.hpp"
#include "handles.hpp"

#include <weft/bootstrap.hpp>

#include <string>

using namespace weft_cabi;

namespace weft_cabi {
void keep_test_warnings(const std::vector<std::string>& warnings);
}

extern "C" {

int weft_test_bootstrap(const weft_model* model, const char* term, const char* settings,
                        weft_bootstrap_result* out) {
    return guarded(WEFT_ECOMPUTE, [&] {
        const char* fn = "weft_test_bootstrap";
        keep_test_warnings({});
        require_model(model, fn);
        require(term, fn, "term");
        require(out, fn, "out");
        *out = weft_bootstrap_result{nan_value, nan_value, nan_value, nan_value, nan_value, nan_value,
                                     nan_value, 0, 0, nan_value, 0, nan_value};
        weft::BootstrapSettings parsed;
        try {
            parsed = weft::parse_bootstrap_settings(settings == nullptr ? "" : settings);
        } catch (const weft::Error& e) {
            fail(WEFT_EMODEL, e.what());
        }
        if (!model->fit.term_position(term)) {
            try {
                (void)weft::wild_bootstrap(model->fit, term, parsed);  // words the missing term
            } catch (const weft::Error& e) {
                fail(WEFT_ERANGE, e.what());
            }
        }
        const weft::BootstrapResult r = weft::wild_bootstrap(full_fit(model), term, parsed);
        keep_test_warnings(r.warnings);
        weft_bootstrap_result b;
        b.estimate = r.estimate;
        b.null_value = r.null_value;
        b.p = r.p;
        b.ci_low = r.ci_low;
        b.ci_high = r.ci_high;
        b.level = r.level;
        b.draws = static_cast<double>(r.draws);
        b.weights = r.weights == weft::BootstrapWeights::webb ? WEFT_BOOT_WEBB : WEFT_BOOT_RADEMACHER;
        b.enumerated = r.enumerated ? 1 : 0;
        b.clusters = static_cast<double>(r.clusters);
        b.by_period = r.by_period ? 1 : 0;
        b.t = r.t;
        *out = b;
        return WEFT_OK;
    });
}

}  // extern "C"
