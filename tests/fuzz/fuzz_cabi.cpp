// libFuzzer target over the C interface (weft.h): the fuzz bytes choose a panel (rows,
// regressors, units as text or numbers, periods, blanks, NaN/infinity not marked
// missing, huge and tiny values), a model (as text built from real and broken words, or
// as an options struct with any field values) and then every entry point is called,
// with buffers of every size and indices past the end.
//
// What counts as a failure: any sanitizer report, a leak, a hang, and the contract
// checks below (weft.h): a failed call leaves a last-error text beginning "weft: ",
// a failed *_new leaves its handle NULL, a size query reports what the real call then
// accepts, a short buffer is refused. WEFT_EINTERNAL is printed, not fatal. A
// numerically silly result (inf, NaN) is not a crash; the hostile catalogue checks those.
//
// Byte layout, read front to back (missing bytes read as 0), so that seeds can be
// written by hand (tests/fuzz/make_seeds.py):
//   [0] rows: 1 + b % 40     [1] regressors: b % 5      [2] flags (see Flags below)
//   [3] model text length L: b % 24, then L word bytes     [+8] options struct bytes
//   then, row by row: outcome, each regressor, unit, period: one cell byte each
//   then query bytes to the end.
#include <weft.h>

#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <limits>
#include <string>
#include <vector>

namespace {

[[noreturn]] void contract_broken(const char *what, const char *detail) {
    std::fprintf(stderr, "weft fuzz: contract broken: %s (%s)\n", what, detail ? detail : "");
    std::abort();
}

void check_failed_call(int status, const char *call) {
    if (status == WEFT_OK) return;
    const char *message = weft_last_error();
    if (message == nullptr) contract_broken("weft_last_error returned NULL", call);
    if (std::strncmp(message, "weft: ", 6) != 0) contract_broken("message without 'weft: '", message);
    if (std::strcmp(message, "weft: no error") == 0) contract_broken("failure without a message", call);
    if (status < WEFT_EINTERNAL || status > WEFT_OK) contract_broken("status not a weft code", call);
    // WEFT_EINTERNAL is a bug by weft.h's own words but not a crash: say so once per
    // run (the input is then worth a catalogue case) instead of stopping the run. A
    // memory error behind it is caught by the sanitizers anyway.
    static bool internal_reported = false;
    if (status == WEFT_EINTERNAL && !internal_reported) {
        internal_reported = true;
        std::fprintf(stderr, "weft fuzz: WEFT_EINTERNAL from %s: %s\n", call, message);
    }
    // status_text must work for every code.
    if (weft_status_text(status) == nullptr) contract_broken("status_text NULL", call);
}

class Bytes {
  public:
    Bytes(const uint8_t *data, size_t size) : data_(data), size_(size) {}
    uint8_t next() { return pos_ < size_ ? data_[pos_++] : 0; }
    bool empty() const { return pos_ >= size_; }

  private:
    const uint8_t *data_;
    size_t size_;
    size_t pos_ = 0;
};

enum Flags : uint8_t {
    kUnitsText = 1,       // units as text ids, else numbers
    kUseStruct = 2,       // model from the options struct bytes, else from the text
    kNames = 4,           // give regressors names (sometimes clashing)
    kNoOutcome = 8,       // leave the outcome unset
    kNoPeriods = 16,      // leave the periods unset
    kNoUnits = 32,        // leave the units unset
    kFirstRowHuge = 64,   // first_row near SIZE_MAX (row numbers in messages overflow?)
    kBigRows = 128        // rows 40..1040 instead of 1..40
};

const char *const kWords[] = {
    "pooled", "fd", "within", "random", "between", "classical", "hc0", "hc1", "hc2", "hc3",
    "cluster", "cluster0", "cluster-period", "cluster-both", "dk", "dk=0", "dk=1", "dk=3",
    "periods", "no-intercept", "level=0.9", "level=0.5", "level=1", "level=0", "level=-1",
    "level=nan", "level=", "dk=", "dk=-2", "dk=99999999999999999999", "WITHIN", "Fd",
    ",", " ", ",,", "=", "level=0.999999999999", "dk=2147483648", "x", "\xff\xfe", "pooled,",
    "level=1e-300", "dk=+1", "dk=1.5"};
constexpr size_t kWordCount = sizeof(kWords) / sizeof(kWords[0]);

// Numbers chosen to provoke overflow, underflow, cancellation and ties.
const double kSpecials[] = {1e15, -1e15, 1e-9, 1e300, -1e300, 1e154, 5e-324, 2.2250738585072014e-308,
                            0.5, 1.0 / 3.0, 9007199254740992.0, 9007199254740993.0, -0.0,
                            1e-300, 123456789.123, 1e8, 1e8 + 1, 3.0000000000000004};
constexpr size_t kSpecialCount = sizeof(kSpecials) / sizeof(kSpecials[0]);

struct Cell {
    double value = 0;
    bool missing = false;
};

Cell number_cell(uint8_t b) {
    Cell c;
    if (b < 0xB0) {
        c.value = static_cast<double>(b % 24) - 6.0;
    } else if (b < 0xB0 + kSpecialCount) {
        c.value = kSpecials[b - 0xB0];
    } else if (b < 0xF0) {
        c.value = static_cast<double>(b) * 0.125;
    } else if (b < 0xF8) {
        c.missing = true;  // a blank or text cell
        c.value = static_cast<double>(b);  // whatever the host leaves there
    } else if (b == 0xF8) {
        c.value = std::numeric_limits<double>::quiet_NaN();
    } else if (b == 0xF9) {
        c.value = std::numeric_limits<double>::infinity();
    } else if (b == 0xFA) {
        c.value = -std::numeric_limits<double>::infinity();
    } else {
        c.missing = true;
        c.value = std::numeric_limits<double>::quiet_NaN();
    }
    return c;
}

Cell period_cell(uint8_t b) {
    Cell c;
    if (b < 0xC0) {
        c.value = 2000.0 + static_cast<double>(b % 12);
    } else {
        c = number_cell(b);
    }
    return c;
}

struct Column {
    std::vector<double> values;
    std::vector<unsigned char> missing;
    bool any_missing = false;
    const unsigned char *mask() const { return any_missing ? missing.data() : nullptr; }
};

void push(Column &column, const Cell &cell) {
    column.values.push_back(cell.value);
    column.missing.push_back(cell.missing ? 1 : 0);
    column.any_missing = column.any_missing || cell.missing;
}

const char *const kWhat[] = {"estimate", "se", "t", "p", "ci-low", "ci-high", "n", "units",
                             "periods", "r2", "corr2-rows", "corr2-means", "corr2-deviations", "sigma",
                             "df", "f", "f-df1", "f-df2", "f-p", "clusters", "rows-dropped",
                             "bogus", ""};
constexpr size_t kWhatCount = sizeof(kWhat) / sizeof(kWhat[0]);

// Every getter of a fitted model, with good and bad buffers.
void exercise_model(const weft_model *model, size_t n_rows, Bytes &bytes) {
    size_t n_terms = 0;
    check_failed_call(weft_model_term_count(model, &n_terms), "term_count");
    std::vector<std::string> names;
    for (size_t i = 0; i <= n_terms; ++i) {
        const char *name = nullptr;
        int status = weft_model_term_name(model, i, &name);
        check_failed_call(status, "term_name");
        if (status == WEFT_OK) {
            if (name == nullptr) contract_broken("term name NULL on success", "");
            names.emplace_back(name);
        } else if (i < n_terms) {
            contract_broken("term_name failed inside the count", weft_last_error());
        }
    }
    size_t needed = 0;
    check_failed_call(weft_model_coefficients(model, nullptr, 0, &needed), "coefficients size");
    if (needed != n_terms * WEFT_COEF_COLUMNS) contract_broken("coefficients needed", "");
    std::vector<double> table(needed + 1);
    if (needed > 0) {
        int small = weft_model_coefficients(model, table.data(), needed - 1, nullptr);
        if (small != WEFT_EBUFFER) contract_broken("short buffer not refused", "coefficients");
    }
    check_failed_call(weft_model_coefficients(model, table.data(), table.size(), &needed), "coefficients");

    size_t n_dropped = 0;
    check_failed_call(weft_model_dropped_count(model, &n_dropped), "dropped_count");
    for (size_t i = 0; i <= n_dropped; ++i) {
        const char *term = nullptr;
        const char *reason = nullptr;
        int status = weft_model_dropped(model, i, &term, &reason);
        check_failed_call(status, "dropped");
        if (status == WEFT_OK) {
            if (term == nullptr || reason == nullptr) contract_broken("dropped NULL", "");
            names.emplace_back(term);
        }
        check_failed_call(weft_model_dropped(model, i, nullptr, nullptr), "dropped NULL outs");
    }
    size_t n_warnings = 0;
    check_failed_call(weft_model_warning_count(model, &n_warnings), "warning_count");
    for (size_t i = 0; i <= n_warnings; ++i) {
        const char *text = nullptr;
        check_failed_call(weft_model_warning(model, i, &text), "warning");
    }
    size_t n_items = 0;
    check_failed_call(weft_model_summary_count(model, &n_items), "summary_count");
    for (size_t i = 0; i <= n_items; ++i) {
        weft_summary_item item;
        int status = weft_model_summary_item(model, i, &item);
        check_failed_call(status, "summary_item");
        if (status == WEFT_OK && (item.label == nullptr || item.text == nullptr))
            contract_broken("summary item NULL string", "");
    }
    weft_options back = WEFT_OPTIONS_INIT;
    check_failed_call(weft_model_options(model, &back), "options");
    back.size = bytes.next() % (sizeof(weft_options) + 1);
    check_failed_call(weft_model_options(model, &back), "options short size");

    std::vector<double> rows(n_rows);
    std::vector<unsigned char> unused(n_rows);
    check_failed_call(weft_model_residuals(model, nullptr, nullptr, 0, &needed), "residuals size");
    if (needed != n_rows) contract_broken("residuals needed != rows", "");
    check_failed_call(weft_model_residuals(model, rows.data(), unused.data(), n_rows, &needed), "residuals");
    check_failed_call(weft_model_fitted(model, rows.data(), nullptr, n_rows, &needed), "fitted");
    if (n_rows > 1 && weft_model_fitted(model, rows.data(), unused.data(), n_rows - 1, nullptr) != WEFT_EBUFFER)
        contract_broken("short buffer not refused", "fitted");

    double value = 0;
    for (size_t w = 0; w < kWhatCount; ++w) {
        const char *term = names.empty() ? "intercept" : names[bytes.next() % names.size()].c_str();
        check_failed_call(weft_model_value(model, kWhat[w], term, &value), "value");
        check_failed_call(weft_model_value(model, kWhat[w], nullptr, &value), "value NULL term");
    }
    check_failed_call(weft_model_value(model, "estimate", "no such term", &value), "value unknown term");

    // Joint tests: by array (with repeats and unknown names) and by list text.
    std::vector<const char *> pick;
    size_t n_pick = bytes.next() % 5;
    for (size_t i = 0; i < n_pick && !names.empty(); ++i) pick.push_back(names[bytes.next() % names.size()].c_str());
    if (bytes.next() & 1) pick.push_back("wage");
    weft_wald_result wald;
    check_failed_call(weft_test_joint(model, pick.empty() ? nullptr : pick.data(), pick.size(), &wald), "joint");
    std::string list;
    for (size_t i = 0; i < pick.size(); ++i) list += (i ? ", " : "") + std::string(pick[i]);
    if (bytes.next() & 1) list += ",,";
    check_failed_call(weft_test_joint_list(model, list.c_str(), &wald), "joint_list");

    for (int form = -1; form <= 4; ++form) {
        weft_hetero_result hetero;
        check_failed_call(weft_test_hetero(model, form, &hetero), "hetero");
    }
    weft_serial_result serial;
    check_failed_call(weft_test_serial(model, &serial), "serial");
}

void exercise_panel(const weft_panel *panel, size_t n_rows, const Column &values, Bytes &bytes) {
    weft_structure structure;
    check_failed_call(weft_panel_structure(panel, &structure), "structure");
    size_t needed = 0;
    int status = weft_panel_period_grid(panel, nullptr, 0, &needed);
    check_failed_call(status, "grid size");
    if (status == WEFT_OK) {
        std::vector<double> grid(needed + 1);
        check_failed_call(weft_panel_period_grid(panel, grid.data(), needed, &needed), "grid");
    }
    std::vector<double> out(n_rows);
    std::vector<unsigned char> out_missing(n_rows);
    int k = static_cast<int>(static_cast<int8_t>(bytes.next()));
    if (bytes.next() == 0xFF) k = (bytes.next() & 1) ? std::numeric_limits<int>::max() : std::numeric_limits<int>::min();
    check_failed_call(weft_panel_diff(panel, values.values.data(), values.mask(), k, out.data(), out_missing.data(), n_rows), "diff");
    check_failed_call(weft_panel_lag(panel, values.values.data(), values.mask(), k, out.data(), nullptr, n_rows), "lag");
    check_failed_call(weft_panel_demean(panel, values.values.data(), values.mask(), out.data(), out_missing.data(), n_rows), "demean");
    if (n_rows > 1 &&
        weft_panel_demean(panel, values.values.data(), values.mask(), out.data(), nullptr, n_rows - 1) == WEFT_OK)
        contract_broken("short buffer accepted", "demean");
    for (int omit = 0; omit <= 1; ++omit) {
        status = weft_panel_dummies(panel, omit, nullptr, 0, &needed);
        check_failed_call(status, "dummies size");
        // Guard the test itself against a huge block (rows x periods is at most 1040 x 1040).
        if (status == WEFT_OK && needed <= (size_t{1} << 21)) {
            std::vector<double> block(needed);
            check_failed_call(weft_panel_dummies(panel, omit, block.data(), needed, &needed), "dummies");
        }
    }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
    Bytes bytes(data, size);
    weft_clear_error();
    size_t n_rows = 1 + bytes.next() % 40;
    size_t n_regressors = bytes.next() % 5;
    uint8_t flags = bytes.next();
    if (flags & kBigRows) n_rows = 40 + static_cast<size_t>(bytes.next()) * 4;

    std::string model_text;
    size_t n_words = bytes.next() % 24;
    for (size_t i = 0; i < n_words; ++i) {
        uint8_t b = bytes.next();
        if (b < 0xE0) {
            model_text += kWords[b % kWordCount];
            model_text += (b & 0x80) ? "," : " ";
        } else {
            model_text += static_cast<char>(b - 0xA0);  // raw bytes, NUL excluded
        }
    }
    weft_options options = WEFT_OPTIONS_INIT;
    options.estimator = static_cast<int8_t>(bytes.next()) % 7;
    options.se = static_cast<int8_t>(bytes.next()) % 12;
    options.dk_lag = static_cast<int8_t>(bytes.next());
    options.period_effects = bytes.next() & 1;
    options.intercept = bytes.next() % 3;
    uint8_t level = bytes.next();
    options.level = level == 0xFF ? std::nan("") : static_cast<double>(level) / 254.0;
    uint8_t layout = bytes.next();
    if (layout == 1) options.size = sizeof(weft_options) - 1;
    if (layout == 2) options.version = 99;
    if (layout == 3) options.size = 0;
    const bool borrow = bytes.next() & 1;  // borrow the columns in place instead of copying them

    size_t first_row = (flags & kFirstRowHuge) ? std::numeric_limits<size_t>::max() - 3 : 2;

    Column outcome, units_number, periods;
    std::vector<Column> regressors(n_regressors);
    std::vector<std::string> unit_text(n_rows);
    std::vector<const char *> unit_ptr(n_rows);
    for (size_t r = 0; r < n_rows; ++r) {
        push(outcome, number_cell(bytes.next()));
        for (auto &column : regressors) push(column, number_cell(bytes.next()));
        uint8_t u = bytes.next();
        if (u >= 0xF0) {
            unit_ptr[r] = (u & 1) ? nullptr : "";
            push(units_number, Cell{std::nan(""), true});
            if (u == 0xF8) {  // an infinite unit id not marked missing
                units_number.values.back() = std::numeric_limits<double>::infinity();
                units_number.missing.back() = 0;
            }
        } else {
            unit_text[r] = "unit " + std::to_string(u % 9);
            if (u >= 0xE0) unit_text[r] = std::string("\"x\xc3\xa9\"\t") + std::to_string(u % 3);
            unit_ptr[r] = nullptr;  // set after the strings stop moving
            push(units_number, Cell{static_cast<double>(u % 9), false});
        }
        push(periods, period_cell(bytes.next()));
    }
    for (size_t r = 0; r < n_rows; ++r)
        if (!unit_text[r].empty()) unit_ptr[r] = unit_text[r].c_str();

    weft_panel *panel = nullptr;
    int status = weft_panel_new(&panel, n_rows, first_row);
    check_failed_call(status, "panel_new");
    if (status != WEFT_OK) {
        if (panel != nullptr) contract_broken("panel_new failed but set the handle", "");
        return 0;
    }
    size_t counted = 0;
    check_failed_call(weft_panel_row_count(panel, &counted), "row_count");
    if (counted != n_rows) contract_broken("row_count", "");

    if (!(flags & kNoUnits)) {
        if (flags & kUnitsText)
            status = weft_panel_set_units_text(panel, unit_ptr.data(), nullptr);
        else
            status = weft_panel_set_units_number(panel, units_number.values.data(), units_number.mask());
        check_failed_call(status, "set_units");
        // Setting twice must be refused, never crash.
        if (weft_panel_set_units_number(panel, units_number.values.data(), nullptr) == WEFT_OK && status == WEFT_OK)
            contract_broken("units set twice accepted", "");
    }
    // (borrowed arrays live until the end of this function, after every free below)
    if (!(flags & kNoPeriods))
        check_failed_call((borrow ? weft_panel_borrow_periods : weft_panel_set_periods)(panel, periods.values.data(),
                                                                                        periods.mask()),
                          "set_periods");
    if (!(flags & kNoOutcome))
        check_failed_call((borrow ? weft_panel_borrow_outcome : weft_panel_set_outcome)(panel, "y", outcome.values.data(),
                                                                                        outcome.mask()),
                          "set_outcome");
    for (size_t j = 0; j < n_regressors; ++j) {
        std::string name;
        if (flags & kNames) name = (j == 2) ? "x1" : (j == 3 ? "intercept" : "v" + std::to_string(j));
        check_failed_call((borrow ? weft_panel_borrow_regressor : weft_panel_add_regressor)(
                              panel, name.empty() ? nullptr : name.c_str(), regressors[j].values.data(),
                              regressors[j].mask()),
                          "add_regressor");
    }

    exercise_panel(panel, n_rows, n_regressors ? regressors[0] : outcome, bytes);

    weft_model *model = nullptr;
    if (flags & kUseStruct) {
        status = weft_model_new(&model, panel, &options);
    } else {
        weft_options parsed;
        check_failed_call(weft_options_parse(&parsed, model_text.c_str()), "options_parse");
        status = weft_model_new_text(&model, panel, model_text.c_str());
    }
    check_failed_call(status, "model_new");
    if ((status == WEFT_OK) != (model != nullptr)) contract_broken("model handle vs status", weft_last_error());

    // The model must not borrow the panel: free the panel first, then use the model.
    weft_hausman_result hausman;
    check_failed_call(weft_test_hausman(panel, (flags & kUseStruct) ? &options : nullptr, &hausman), "hausman");
    weft_effects_result effects;
    check_failed_call(weft_test_effects(panel, (flags & kUseStruct) ? &options : nullptr, &effects), "effects");
    weft_panel_free(panel);

    if (model != nullptr) exercise_model(model, n_rows, bytes);
    weft_model_free(model);
    weft_model_free(nullptr);
    weft_panel_free(nullptr);
    (void)weft_status_text(static_cast<int8_t>(bytes.next()));
    return 0;
}
