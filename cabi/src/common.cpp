// common.cpp -- versions, the last-error text, status texts and model options.
#include "boundary.hpp"
#include "convert.hpp"

#include <weft/options.hpp>
#include <weft/panel.hpp>

#include <cstddef>
#include <cstring>
#include <string>

namespace weft_cabi {

namespace {
// Per thread, so that two spreadsheet recalculation threads never read each other's
// message. Initialised lazily: a thread that never fails pays nothing.
thread_local std::string last_error_text = "weft: no error";
}  // namespace

void set_error(const char* message) noexcept {
    try {
        last_error_text.assign("weft: ");
        last_error_text.append(message);
    } catch (...) {
        // Out of memory while reporting: keep a fixed text that needs no allocation
        // beyond what the string already holds.
        last_error_text.clear();
    }
}

void set_error(const std::string& message) noexcept { set_error(message.c_str()); }

weft::ModelSpec to_spec(const weft_options& options) {
    weft::ModelSpec spec;
    switch (options.estimator) {
        case WEFT_POOLED: spec.estimator = weft::Estimator::pooled; break;
        case WEFT_FD: spec.estimator = weft::Estimator::fd; break;
        case WEFT_WITHIN: spec.estimator = weft::Estimator::within; break;
        case WEFT_RANDOM: spec.estimator = weft::Estimator::random; break;
        case WEFT_BETWEEN: spec.estimator = weft::Estimator::between; break;
        default:
            fail(WEFT_EINVAL, "options: estimator is " + std::to_string(options.estimator) +
                                  ", which is not a weft_estimator value (0 to 4)");
    }
    switch (options.se) {
        case WEFT_SE_CLASSICAL: spec.covariance = weft::Covariance::classical; break;
        case WEFT_SE_HC0: spec.covariance = weft::Covariance::hc0; break;
        case WEFT_SE_HC1: spec.covariance = weft::Covariance::hc1; break;
        case WEFT_SE_HC2: spec.covariance = weft::Covariance::hc2; break;
        case WEFT_SE_HC3: spec.covariance = weft::Covariance::hc3; break;
        case WEFT_SE_CLUSTER: spec.covariance = weft::Covariance::cluster; break;
        case WEFT_SE_CLUSTER0: spec.covariance = weft::Covariance::cluster0; break;
        case WEFT_SE_CLUSTER_PERIOD: spec.covariance = weft::Covariance::cluster_period; break;
        case WEFT_SE_CLUSTER_BOTH: spec.covariance = weft::Covariance::cluster_both; break;
        case WEFT_SE_DK: spec.covariance = weft::Covariance::dk; break;
        case WEFT_SE_CR2: spec.covariance = weft::Covariance::cr2; break;
        default:
            fail(WEFT_EINVAL, "options: se is " + std::to_string(options.se) +
                                  ", which is not a weft_se value (0 to 10)");
    }
    if (options.dk_lag < -1)
        fail(WEFT_EMODEL, "options: dk_lag is " + std::to_string(options.dk_lag) +
                              "; use -1 for the default lag or a lag of 0 or more");
    if (!(options.level > 0.0 && options.level < 1.0))
        fail(WEFT_EMODEL, "options: level is " + weft::format_number(options.level) +
                              "; a confidence level must lie strictly between 0 and 1, e.g. 0.95");
    spec.dk_lag = options.dk_lag;
    spec.period_effects = options.period_effects != 0;
    spec.intercept = options.intercept != 0;
    spec.level = options.level;
    return spec;
}

weft_options from_spec(const weft::ModelSpec& spec) {
    weft_options o = WEFT_OPTIONS_INIT;
    switch (spec.estimator) {
        case weft::Estimator::pooled: o.estimator = WEFT_POOLED; break;
        case weft::Estimator::fd: o.estimator = WEFT_FD; break;
        case weft::Estimator::within: o.estimator = WEFT_WITHIN; break;
        case weft::Estimator::random: o.estimator = WEFT_RANDOM; break;
        case weft::Estimator::between: o.estimator = WEFT_BETWEEN; break;
    }
    switch (spec.covariance) {
        case weft::Covariance::classical: o.se = WEFT_SE_CLASSICAL; break;
        case weft::Covariance::hc0: o.se = WEFT_SE_HC0; break;
        case weft::Covariance::hc1: o.se = WEFT_SE_HC1; break;
        case weft::Covariance::hc2: o.se = WEFT_SE_HC2; break;
        case weft::Covariance::hc3: o.se = WEFT_SE_HC3; break;
        case weft::Covariance::cluster: o.se = WEFT_SE_CLUSTER; break;
        case weft::Covariance::cluster0: o.se = WEFT_SE_CLUSTER0; break;
        case weft::Covariance::cluster_period: o.se = WEFT_SE_CLUSTER_PERIOD; break;
        case weft::Covariance::cluster_both: o.se = WEFT_SE_CLUSTER_BOTH; break;
        case weft::Covariance::dk: o.se = WEFT_SE_DK; break;
        case weft::Covariance::cr2: o.se = WEFT_SE_CR2; break;
    }
    o.dk_lag = spec.dk_lag;
    o.period_effects = spec.period_effects ? 1 : 0;
    o.intercept = spec.intercept ? 1 : 0;
    o.level = spec.level;
    return o;
}

// The first version's layout ends with `level`; a caller compiled against it passes
// at least this many bytes.
constexpr std::size_t options_v1_size = offsetof(weft_options, level) + sizeof(double);

weft::ModelSpec read_options(const weft_options* options, const char* function) {
    weft_options local = WEFT_OPTIONS_INIT;
    if (options != nullptr) {
        if (options->version < 1 || options->version > WEFT_OPTIONS_VERSION)
            fail(WEFT_EINVAL, std::string(function) + ": options.version is " +
                                  std::to_string(options->version) + " but this library knows versions 1 to " +
                                  std::to_string(WEFT_OPTIONS_VERSION) +
                                  "; start from WEFT_OPTIONS_INIT or weft_options_init()");
        if (options->size < options_v1_size)
            fail(WEFT_EINVAL, std::string(function) + ": options.size is " + std::to_string(options->size) +
                                  " bytes, smaller than any weft_options layout (" +
                                  std::to_string(options_v1_size) +
                                  "); start from WEFT_OPTIONS_INIT or weft_options_init()");
        // Fields past the caller's size keep their defaults; bytes past ours (a newer
        // caller) are fields this library does not know and cannot honour.
        std::memcpy(&local, options, options->size < sizeof local ? options->size : sizeof local);
        local.size = sizeof local;
    }
    return to_spec(local);
}

}  // namespace weft_cabi

using namespace weft_cabi;

extern "C" {

int weft_version_number(void) {
    return WEFT_LIBRARY_VERSION_MAJOR * 10000 + WEFT_LIBRARY_VERSION_MINOR * 100 +
           WEFT_LIBRARY_VERSION_PATCH;
}

const char* weft_version_text(void) { return WEFT_LIBRARY_VERSION_TEXT; }

const char* weft_last_error(void) {
    // An empty text only happens when reporting itself ran out of memory.
    return last_error_text.empty() ? "weft: out of memory" : last_error_text.c_str();
}

void weft_clear_error(void) { set_error("no error"); }

const char* weft_status_text(int status) {
    switch (status) {
        case WEFT_OK: return "success";
        case WEFT_EINVAL: return "invalid argument";
        case WEFT_ENOMEM: return "out of memory";
        case WEFT_EBUFFER: return "buffer too small";
        case WEFT_EDATA: return "data rejected";
        case WEFT_EMODEL: return "model text or options rejected";
        case WEFT_ERANGE: return "index or name not found";
        case WEFT_ECOMPUTE: return "cannot be computed from these data";
        case WEFT_EINTERNAL: return "internal error";
        default: return "unknown status";
    }
}

int weft_options_init(weft_options* options) {
    return guarded(WEFT_EINVAL, [&] {
        require(options, "weft_options_init", "options");
        const weft_options defaults = WEFT_OPTIONS_INIT;
        *options = defaults;
        return WEFT_OK;
    });
}

int weft_options_parse(weft_options* options, const char* model_text) {
    return guarded(WEFT_EMODEL, [&] {
        require(options, "weft_options_parse", "options");
        const weft_options defaults = WEFT_OPTIONS_INIT;
        *options = defaults;
        weft::ModelSpec spec = weft::parse_model_text(model_text == nullptr ? "" : model_text);
        if (!spec.weights.empty())
            fail(WEFT_EMODEL, "weights=" + spec.weights +
                                  ": weft_options cannot hold a weight column; pass the model text to "
                                  "weft_model_new_text, or set the weights with weft_panel_set_weights");
        *options = from_spec(spec);
        return WEFT_OK;
    });
}

int weft_options_text(const weft_options* options, char* buf, size_t capacity, size_t* needed) {
    return guarded(WEFT_EMODEL, [&] {
        const char* fn = "weft_options_text";
        require(options, fn, "options");
        const std::string text = weft::describe(read_options(options, fn));
        if (!buffer_ready(fn, buf, capacity, needed, text.size() + 1)) return WEFT_OK;
        std::memcpy(buf, text.c_str(), text.size() + 1);
        return WEFT_OK;
    });
}

}  // extern "C"
