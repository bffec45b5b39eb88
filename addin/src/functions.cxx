#include "functions.hpp"

#include "cache.hpp"
#include "sheet_checks.hpp"
#include "warnings_view.hpp"
#include "trace.hpp"
#include "weights.hpp"

#include <weft.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <limits>
#include <memory>
#include <mutex>
#include <string>
#include <utility>
#include <vector>

namespace weft_addin {

namespace {

// ---------------------------------------------------------------- small helpers

[[noreturn]] void fail(const std::string& message_after_prefix) {
    throw UserError(message_after_prefix);
}

// Turn a failed weft call into a UserError carrying weft's own message.
void check(int status) {
    if (status != WEFT_OK) throw UserError(UserError::FullText{}, weft_last_error());
}

std::string format_number(double v) {
    if (v == 0.0) v = 0.0;  // -0 is written as 0, so it names the same unit as 0
    char buf[64];
    if (std::isfinite(v) && v == std::floor(v) && std::fabs(v) < 1e15)
        std::snprintf(buf, sizeof buf, "%.0f", v);
    else
        std::snprintf(buf, sizeof buf, "%.15g", v);
    return buf;
}

std::string lower(std::string s) {
    for (char& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
    return s;
}

std::string trim(const std::string& s) {
    std::size_t b = 0, e = s.size();
    while (b < e && std::isspace(static_cast<unsigned char>(s[b]))) ++b;
    while (e > b && std::isspace(static_cast<unsigned char>(s[e - 1]))) --e;
    return s.substr(b, e - b);
}

std::string quoted(const std::string& s) { return "\"" + s + "\""; }

// The text of a header cell: its text, a number written out, or "" for a blank.
std::string header_text(const Cell& c) {
    if (c.is_text()) return trim(c.text);
    if (c.is_number()) return format_number(c.number);
    return "";
}

struct PanelDeleter {
    void operator()(weft_panel* p) const { weft_panel_free(p); }
};
struct ModelDeleter {
    void operator()(weft_model* m) const { weft_model_free(m); }
};
using PanelPtr = std::unique_ptr<weft_panel, PanelDeleter>;
using ModelPtr = std::unique_ptr<weft_model, ModelDeleter>;

// ------------------------------------------------------------- reading columns

// Text ids are kept as one buffer of bytes with offsets, as weft_panel_borrow_units_text
// takes them (no string and no pointer per row): id i is bytes[offsets[i], offsets[i + 1]).
// An id ends at a NUL byte of its own, as the C strings given to weft did before.
struct UnitColumn {
    bool text = false;
    std::string bytes;                    // when text
    std::vector<std::size_t> offsets{0};  // when text: one more than the rows
    Buffer<double> numbers;               // when numbers
    Buffer<unsigned char> missing;

    void add_id(const std::string& id) {
        bytes.append(id.c_str());
        offsets.push_back(bytes.size());
    }
    std::string id(std::size_t i) const { return bytes.substr(offsets[i], offsets[i + 1] - offsets[i]); }
};

// The cells a grid's shortcut left (read_number_block): read one by one, in row-major order.
using OtherCells = std::vector<std::pair<std::size_t, std::size_t>>;

// Rows start..end-1 of column c through the grid's shortcuts (numbers only); the
// rows of `others` are left for cell(). false when the grid has no shortcut.
bool shortcut_numbers(const CellGrid& t, std::size_t c, std::size_t start, std::size_t end,
                      NumericColumn& col, std::vector<std::size_t>& others) {
    if (t.take_numbers(c, start, end, col, others)) return true;
    col.values.resize(end - start);
    col.missing.resize(end - start);
    double* values = col.values.data();
    unsigned char* missing = col.missing.data();
    OtherCells block;
    if (!t.read_number_block(c, 1, start, end, &values, &missing, block)) return false;
    for (const auto& o : block) others.push_back(o.first);
    return true;
}

// Rows start..end-1 of column c; anything but a number (blank, text) is missing.
// With `scan`, an error value or a number stored as text is refused and other
// text is counted (sheet_checks.hpp).
NumericColumn read_numbers(const CellGrid& t, std::size_t c, std::size_t start, std::size_t end,
                           TextCells* scan = nullptr, const char* name = "") {
    NumericColumn col;
    const std::size_t n = end - start;
    std::vector<std::size_t> others;
    if (!shortcut_numbers(t, c, start, end, col, others)) {
        col.values.assign(n, 0.0);
        col.missing.assign(n, 1);
        others.resize(n);
        for (std::size_t i = 0; i < n; ++i) others[i] = i;
    }
    for (const std::size_t i : others) {
        const Cell cell = t.cell(start + i, c);
        if (cell.is_number()) {
            col.values[i] = cell.number;
            col.missing[i] = 0;
        } else if (scan != nullptr && !cell.is_blank()) {
            scan->note({name, &t}, start + i, c, cell);
        }
    }
    return col;
}

// Unit ids are text when any id is text (numbers are then written out, so that
// a column mixing 7 and "North 7" still names two different units).
UnitColumn read_units(const CellGrid& t, std::size_t start, std::size_t end) {
    UnitColumn col;
    const std::size_t n = end - start;
    // Numbers first, through the grid's shortcut: the ids are text only when one of
    // the cells it left is.
    NumericColumn numbers;
    std::vector<std::size_t> others;
    if (shortcut_numbers(t, 0, start, end, numbers, others)) {
        for (const std::size_t i : others)
            if (t.cell(start + i, 0).is_text()) col.text = true;
        if (!col.text) {
            col.numbers = std::move(numbers.values);
            col.missing = std::move(numbers.missing);
            for (const std::size_t i : others) {
                const Cell cell = t.cell(start + i, 0);
                TextCells::note_error({"units", &t}, start + i, 0, cell);
                if (cell.is_number()) {
                    col.numbers[i] = cell.number;
                    col.missing[i] = 0;
                }
            }
            return col;
        }
    }
    for (std::size_t i = 0; i < n && !col.text; ++i)
        if (t.cell(start + i, 0).is_text()) col.text = true;
    col.missing.assign(n, 1);
    if (col.text) {
        col.offsets.reserve(n + 1);
        for (std::size_t i = 0; i < n; ++i) {
            const Cell cell = t.cell(start + i, 0);
            TextCells::note_error({"units", &t}, start + i, 0, cell);
            if (cell.is_text()) {
                col.add_id(cell.text);
                col.missing[i] = 0;
            } else if (cell.is_number()) {
                col.add_id(format_number(cell.number));
                col.missing[i] = 0;
            } else {
                col.add_id(std::string());
            }
        }
    } else {
        col.numbers.assign(n, 0.0);
        for (std::size_t i = 0; i < n; ++i) {
            const Cell cell = t.cell(start + i, 0);
            TextCells::note_error({"units", &t}, start + i, 0, cell);
            if (cell.is_number()) {
                col.numbers[i] = cell.number;
                col.missing[i] = 0;
            }
        }
    }
    return col;
}

void set_units(weft_panel* p, const UnitColumn& u) {
    if (u.text) {
        std::vector<std::string> ids(u.missing.size());
        std::vector<const char*> ptrs(ids.size());
        for (std::size_t i = 0; i < ids.size(); ++i) {
            ids[i] = u.id(i);
            ptrs[i] = ids[i].c_str();
        }
        check(weft_panel_set_units_text(p, ptrs.data(), u.missing.data()));
    } else {
        check(weft_panel_set_units_number(p, u.numbers.data(), u.missing.data()));
    }
}

void hash_numbers(Hasher& h, const NumericColumn& c) {
    h.add_u64(c.values.size());
    for (std::size_t i = 0; i < c.values.size(); ++i) {
        h.add_u64(c.missing[i]);
        if (!c.missing[i]) h.add_double(c.values[i]);
    }
}

void hash_units(Hasher& h, const UnitColumn& u) {
    h.add_u64(u.text ? 1 : 0);
    const std::size_t n = u.missing.size();
    for (std::size_t i = 0; i < n; ++i) {
        h.add_u64(u.missing[i]);
        if (u.missing[i]) continue;
        if (u.text)
            h.add_string(u.id(i));
        else
            h.add_double(u.numbers[i]);
    }
}

void require_one_column(const CellGrid& t, const char* name, const char* what) {
    if (t.col_count() != 1)
        fail(std::string(name) + " has " + std::to_string(t.col_count()) +
             " columns; give one column (" + what + ")");
}

void require_same_rows(const CellGrid& t, const char* name, const CellGrid& ref,
                       const char* ref_name) {
    if (t.given_row_count() != ref.given_row_count())
        fail(std::string(name) + " has " + std::to_string(t.given_row_count()) + " rows but " +
             ref_name + " has " + std::to_string(ref.given_row_count()) +
             "; give all ranges the same rows (the same first and last row)");
}

void require_data_rows(std::size_t rows, bool header) {
    if (rows == 0) fail("the ranges are empty; select the cells that hold the data");
    if (header && rows == 1)
        fail("the ranges hold only a header row; select the data rows below it too");
}

// ------------------------------------------------------------ the model input

// The columns read from the four model ranges. A panel borrows them (weft.h): they
// live, shared, as long as the panel and every model made from it.
struct PanelColumns {
    NumericColumn outcome;
    std::vector<NumericColumn> regressors;
    UnitColumn units;
    NumericColumn periods;
};

// The four model ranges read into columns, with their names and a hash that
// identifies them for the cache.
struct PanelInput {
    bool header = false;
    std::size_t n = 0;          // data rows
    std::size_t first_row = 1;  // position of the first data row within the ranges
    std::string outcome_name;
    std::vector<std::string> regressor_names;
    std::shared_ptr<PanelColumns> columns = std::make_shared<PanelColumns>();
    std::vector<std::string> text_cell;  // per regressor: the first cell holding text (empty: none), for weights=
    Hash128 hash;
    std::vector<std::string> warnings;  // about the cells (sheet_checks.hpp)
    // The ranges came as cells (the sheet* methods): results show warnings in view
    // (warnings_view.hpp). The value-array methods of 0.3 workbooks keep their layout.
    bool placed = false;
};

bool all_missing(const Buffer<unsigned char>& missing) {
    return std::all_of(missing.begin(), missing.end(), [](unsigned char m) { return m != 0; });
}

// A column without a single usable value drops every row; name that column
// rather than leave the user with "no usable rows".
void require_some_values(const PanelInput& in) {
    const PanelColumns& p = *in.columns;
    const char* where = in.header ? " below the header" : "";
    if (all_missing(p.outcome.missing))
        fail(std::string("outcome holds no numbers") + where +
             "; select the column of the dependent variable");
    for (std::size_t k = 0; k < p.regressors.size(); ++k) {
        if (!all_missing(p.regressors[k].missing)) continue;
        const std::string name =
            in.regressor_names[k].empty() ? "x" + std::to_string(k + 1) : in.regressor_names[k];
        fail("regressor " + quoted(name) + " (column " + std::to_string(k + 1) +
             " of regressors) holds no numbers" + where + "; fill it or leave it out of the range");
    }
    if (all_missing(p.units.missing))
        fail(std::string("units is blank in every row") + where + "; give each row its unit id");
    if (all_missing(p.periods.missing))
        fail(std::string("periods holds no numbers") + where +
             "; periods must be numbers or dates (a text period is read as missing)");
}

// A regressor column equal to the outcome in every row (the outcome's range
// selected among the regressors too) gives a coefficient of 1 and nothing else.
std::vector<std::string> same_as_outcome_warnings(const PanelInput& in) {
    const PanelColumns& p = *in.columns;
    std::vector<std::string> out;
    for (std::size_t k = 0; k < p.regressors.size(); ++k) {
        const NumericColumn& x = p.regressors[k];
        if (x.missing != p.outcome.missing || x.values != p.outcome.values) continue;
        const std::string name =
            in.regressor_names[k].empty() ? "x" + std::to_string(k + 1) : in.regressor_names[k];
        out.push_back("regressor " + quoted(name) + " (column " + std::to_string(k + 1) +
                      " of regressors) equals the outcome in every row; leave the outcome's "
                      "column out of regressors");
    }
    return out;
}

// Every regressor column from the grid's second shortcut (take_numbers), with the
// cells left for cell() in row-major order; false (xs untouched in size) when a
// column is not there.
bool take_regressors(const CellGrid& regressors, std::size_t start, std::size_t n,
                     std::vector<NumericColumn>& xs, OtherCells& others) {
    std::vector<NumericColumn> taken(xs.size());
    OtherCells left;
    for (std::size_t c = 0; c < xs.size(); ++c) {
        std::vector<std::size_t> rows;
        if (!regressors.take_numbers(c, start, start + n, taken[c], rows)) return false;
        for (const std::size_t i : rows) left.emplace_back(i, c);
    }
    std::sort(left.begin(), left.end());
    xs = std::move(taken);
    others = std::move(left);
    return true;
}

// The regressor columns from the grid's first shortcut, in one pass over the rows (the
// grid is row-major: a pass per column would touch every row once per column), or,
// without one, every cell left for cell().
void read_regressor_block(const CellGrid& regressors, std::size_t start, std::size_t n,
                          std::vector<NumericColumn>& xs, OtherCells& others) {
    std::vector<double*> values(xs.size());
    std::vector<unsigned char*> missing(xs.size());
    for (std::size_t c = 0; c < xs.size(); ++c) {
        xs[c].values.resize(n);
        xs[c].missing.resize(n);
        values[c] = xs[c].values.data();
        missing[c] = xs[c].missing.data();
    }
    if (regressors.read_number_block(0, xs.size(), start, start + n, values.data(), missing.data(), others))
        return;
    for (NumericColumn& x : xs) {
        std::fill(x.values.begin(), x.values.end(), 0.0);
        std::fill(x.missing.begin(), x.missing.end(), 1);
    }
    others.clear();
    for (std::size_t i = 0; i < n; ++i)
        for (std::size_t c = 0; c < xs.size(); ++c) others.emplace_back(i, c);
}

// The regressor columns, rows start..start+n-1: taken as read while the cells were
// keyed, or read now. A cell
// that is not a number is read as the cells were before the shortcut: in row-major
// order, so the first error or text found is the same.
void read_regressors(PanelInput& p, const CellGrid& regressors, std::size_t start, TextCells& scan) {
    const std::size_t n_regressors = regressors.col_count();
    std::vector<NumericColumn>& xs = p.columns->regressors;
    xs.resize(n_regressors);
    p.text_cell.assign(n_regressors, std::string());
    OtherCells others;
    if (!take_regressors(regressors, start, p.n, xs, others)) read_regressor_block(regressors, start, p.n, xs, others);
    for (const auto& o : others) {
        const std::size_t i = o.first, c = o.second;
        const Cell cell = regressors.cell(start + i, c);
        if (!cell.is_number()) {
            if (cell.is_text() && p.text_cell[c].empty())
                p.text_cell[c] = located({"regressors", &regressors}, start + i, c);
            if (!cell.is_blank()) scan.note({"regressors", &regressors}, start + i, c, cell);
            continue;
        }
        xs[c].values[i] = cell.number;
        xs[c].missing[i] = 0;
    }
}

// The key of the input for the caches. The input is a function of the cells as the
// office passed them, so a source's key of those cells identifies it too, without a
// second pass over every value; a source without one hashes the columns read.
Hash128 input_hash(const PanelInput& p, const Hash128* cells_key, bool regressors_optional) {
    Hasher h;
    if (cells_key != nullptr) {
        h.add_u64(0x63656c6c73ull);  // kept apart from the column hashes below
        h.add_u64(cells_key->a);
        h.add_u64(cells_key->b);
        h.add_u64(regressors_optional ? 1 : 0);
        return h.digest();
    }
    const PanelColumns& c = *p.columns;
    h.add_u64(p.first_row);
    h.add_string(p.outcome_name);
    h.add_u64(p.regressor_names.size());
    for (const std::string& name : p.regressor_names) h.add_string(name);
    hash_numbers(h, c.outcome);
    for (const NumericColumn& x : c.regressors) hash_numbers(h, x);
    for (const std::string& cell : p.text_cell) h.add_string(cell);
    hash_units(h, c.units);
    hash_numbers(h, c.periods);
    return h.digest();
}

// regressors_optional: a grid of no columns means no regressors (the controls of the
// event functions); otherwise it is refused. cells_key: the source's key of the cells.
PanelInput read_panel(const PanelRanges& in, bool regressors_optional = false,
                      const Hash128* cells_key = nullptr) {
    require_one_column(in.outcome, "outcome", "the dependent variable");
    require_one_column(in.units, "units", "the unit id of each row");
    require_one_column(in.periods, "periods", "the period of each row");
    const bool no_regressors = in.regressors.col_count() == 0;
    if (no_regressors && !regressors_optional) fail("regressors is empty; give one column per regressor");
    if (no_regressors)
        require_same_start({{"outcome", &in.outcome}, {"units", &in.units}, {"periods", &in.periods}});
    else
        require_same_start({{"outcome", &in.outcome}, {"regressors", &in.regressors},
                            {"units", &in.units}, {"periods", &in.periods}});
    if (!no_regressors) require_same_rows(in.regressors, "regressors", in.outcome, "outcome");
    require_same_rows(in.units, "units", in.outcome, "outcome");
    require_same_rows(in.periods, "periods", in.outcome, "outcome");

    PanelInput p;
    const std::size_t rows = std::min({in.outcome.row_count(), no_regressors ? in.outcome.row_count() : in.regressors.row_count(),
                                       in.units.row_count(), in.periods.row_count()});
    p.header = rows > 0 && in.outcome.cell(0, 0).is_text();
    require_data_rows(rows, p.header);
    const std::size_t start = p.header ? 1 : 0;
    p.n = rows - start;
    // weft's own messages name rows as first_row + i: sheet rows when the place is
    // known (the ranges start on one sheet row), else rows of the ranges.
    p.first_row = start + 1 + (in.outcome.place() != nullptr ? in.outcome.place()->row : 0);

    // Trimming made the four row counts equal; `rows` guards the rest.
    const CellGrid &outcome = in.outcome, &regressors = in.regressors, &units = in.units,
                   &periods = in.periods;
    const std::size_t n_regressors = regressors.col_count();
    require_consistent_headers({"outcome", &outcome}, p.header,
                               {{"regressors", &regressors}, {"periods", &periods}});

    if (p.header) {
        p.outcome_name = header_text(outcome.cell(0, 0));
        for (std::size_t c = 0; c < n_regressors; ++c)
            p.regressor_names.push_back(header_text(regressors.cell(0, c)));
    } else {
        p.regressor_names.assign(n_regressors, std::string());
    }
    TextCells scan;
    p.columns->outcome = read_numbers(outcome, 0, start, rows, &scan, "outcome");
    read_regressors(p, regressors, start, scan);
    p.columns->units = read_units(units, start, rows);
    p.columns->periods = read_numbers(periods, 0, start, rows, &scan, "periods");
    require_some_values(p);
    p.warnings = scan.warnings();
    p.placed = in.outcome.place() != nullptr;
    for (std::string& w : hidden_row_warnings({{"outcome", &outcome}, {"units", &units}}, start, rows))
        p.warnings.push_back(std::move(w));
    for (std::string& w : same_as_outcome_warnings(p)) p.warnings.push_back(std::move(w));

    CallTrace::mark("read");
    p.hash = input_hash(p, cells_key, regressors_optional);
    CallTrace::mark("hash");
    return p;
}

// The missing mask to hand over: NULL when no row is missing (weft.h), which spares
// the fit a look at every row's flag.
const unsigned char* mask_or_null(const Buffer<unsigned char>& missing) {
    return std::find(missing.begin(), missing.end(), 1) == missing.end() ? nullptr : missing.data();
}

// A panel over the columns read: borrowed in place (the caller keeps in.columns alive
// as long as the panel and its models), or copied when `borrow` is false.
PanelPtr make_panel(const PanelInput& in, bool borrow = true) {
    weft_panel* raw = nullptr;
    check(weft_panel_new(&raw, in.n, in.first_row));
    PanelPtr p(raw);
    const PanelColumns& c = *in.columns;
    if (borrow && c.units.text)
        check(weft_panel_borrow_units_text(p.get(), c.units.bytes.data(), c.units.offsets.data(),
                                           mask_or_null(c.units.missing)));
    else if (borrow)
        check(weft_panel_borrow_units_number(p.get(), c.units.numbers.data(), mask_or_null(c.units.missing)));
    else
        set_units(p.get(), c.units);
    const auto periods = borrow ? weft_panel_borrow_periods : weft_panel_set_periods;
    const auto outcome = borrow ? weft_panel_borrow_outcome : weft_panel_set_outcome;
    const auto regressor = borrow ? weft_panel_borrow_regressor : weft_panel_add_regressor;
    check(periods(p.get(), c.periods.values.data(), mask_or_null(c.periods.missing)));
    check(outcome(p.get(), in.outcome_name.empty() ? nullptr : in.outcome_name.c_str(), c.outcome.values.data(),
                  mask_or_null(c.outcome.missing)));
    for (std::size_t k = 0; k < c.regressors.size(); ++k)
        check(regressor(p.get(), in.regressor_names[k].c_str(), c.regressors[k].values.data(),
                        mask_or_null(c.regressors[k].missing)));
    return p;
}

// The model text: omitted, a blank reference (which Calc passes as 0) or "" give
// the defaults; a range of words is read as the words of its cells.
std::string model_text(const Arg& model) { return words_text(model, "model", "\"within cluster\""); }

// ------------------------------------------------------------------ the cache

}  // namespace

void log_line(const std::string& line) {
    const char* path = std::getenv("WEFT_ADDIN_LOG");
    if (path == nullptr || *path == '\0') return;
    if (std::FILE* f = std::fopen(path, "a")) {
        std::fputs((line + "\n").c_str(), f);
        std::fclose(f);
    }
}

namespace {

// A panel borrows its columns, and a model made from it may read them again
// (weft.h): each entry keeps them alive. Declared first, so freed last.
struct PanelEntry {
    std::shared_ptr<const PanelColumns> columns;
    PanelPtr panel;
    std::string error;  // the "weft: " text when the panel was rejected
};

struct ModelEntry {
    std::shared_ptr<const PanelColumns> columns;
    ModelPtr model;
    std::string error;
};

// Calc does not call add-ins from several threads, but one handle must never be
// used by two threads, so every function holds this lock while it uses weft.
std::mutex cache_mutex;
LruCache<PanelEntry> panel_cache(4);
LruCache<ModelEntry> model_cache(8);

std::shared_ptr<PanelEntry> cached_panel(const PanelInput& in) {
    if (auto hit = panel_cache.find(in.hash)) return hit;
    auto entry = std::make_shared<PanelEntry>();
    try {
        entry->columns = in.columns;
        entry->panel = make_panel(in);
    } catch (const UserError& e) {
        entry->error = e.what();
    }
    panel_cache.put(in.hash, entry);
    return entry;
}

const weft_panel* panel_or_throw(const PanelEntry& e) {
    if (!e.error.empty()) throw UserError(UserError::FullText{}, e.error);
    return e.panel.get();
}

// What a WEFT.FIT cell names: a fitted model kept for the cells that take the fit
// cell instead of the four ranges. Calc's dependency tracking keeps those cells
// current: when a range changes, the fit cell is computed again and shows a new
// fit (the name is the model key, so new data or model words give a new name),
// and every cell that takes it follows. The office computes add-in cells when it
// opens a file (whatever its recalculate-on-load setting), so a reopened workbook
// fits again. Fits stay here, whatever model_cache evicts, while fewer than
// kFitsKept newer fits were made and the newer ones hold less than kFitCellBudget
// cells of input (about 8 bytes each, and the model keeps a copy of its data).
struct FitEntry {
    std::shared_ptr<ModelEntry> entry;
    std::shared_ptr<PanelEntry> panel;  // for the tests that fit other estimators
    bool header = false;
    std::size_t n = 0;
    std::vector<std::string> warnings;  // about the cells the fit read
    bool placed = false;
};
constexpr std::size_t kFitsKept = 32;
constexpr std::size_t kFitCellBudget = std::size_t{64} << 20;
LruCache<FitEntry> fit_cache(kFitsKept, kFitCellBudget);

// The fitted model for these ranges and model text: from the cache, or fitted now.
// A rejected fit is cached as its message, so twenty cells over one bad input do
// not refit twenty times either.
// The canonical text of a model ("cluster within" and "within  cluster" are one
// model, so they share one fit); a text weft rejects is reported right here.
// weft_options holds no weights=NAME (weft.h): that word is kept apart and appended.
std::string canonical_model_text(const std::string& text) {
    const ModelWords words = split_weights_word(text);
    weft_options o = WEFT_OPTIONS_INIT;
    check(weft_options_parse(&o, words.rest.c_str()));
    size_t needed = 0;
    check(weft_options_text(&o, nullptr, 0, &needed));
    std::vector<char> buf(needed + 1, '\0');
    check(weft_options_text(&o, buf.data(), buf.size(), &needed));
    return std::string(buf.data()) + (words.weights.empty() ? "" : " weights=" + words.weights);
}

// weights=NAME: a text cell in the weight column is an error naming its row (a blank
// weight drops the row; a text among the other regressors drops it too).
void check_weight_cells(const PanelInput& in, const std::string& text) {
    const std::string name = split_weights_word(text).weights;
    if (name.empty()) return;
    const std::size_t k = weight_column(in.regressor_names, name);
    if (k == std::string::npos || in.text_cell[k].empty()) return;
    fail("weights " + quoted(name) + " (column " + std::to_string(k + 1) + " of regressors): " +
         in.text_cell[k] + " holds text; a weight must be a number of 0 or more "
         "(0 leaves the row out, a blank cell drops it)");
}

std::shared_ptr<ModelEntry> cached_model(const PanelInput& in, const std::string& given_text,
                                         Hash128& key) {
    const std::string text = canonical_model_text(given_text);
    Hasher h;
    h.add_u64(in.hash.a);
    h.add_u64(in.hash.b);
    h.add_string(text);
    key = h.digest();
    if (auto hit = model_cache.find(key)) {
        log_line("hit " + key.hex());
        CallTrace::note("hit");
        return hit;
    }
    // A fit cell may still hold the model that model_cache let go.
    if (auto kept = fit_cache.find(key)) {
        log_line("hit " + key.hex());
        CallTrace::note("hit-fit");
        model_cache.put(key, kept->entry);
        return kept->entry;
    }
    auto entry = std::make_shared<ModelEntry>();
    try {
        check_weight_cells(in, text);
        const std::shared_ptr<PanelEntry> panel_entry = cached_panel(in);
        const weft_panel* panel = panel_or_throw(*panel_entry);
        entry->columns = panel_entry->columns;
        CallTrace::mark("panel");
        weft_model* raw = nullptr;
        check(weft_model_new_text(&raw, panel, text.c_str()));
        entry->model.reset(raw);
        CallTrace::mark("fit");
    } catch (const UserError& e) {
        entry->error = e.what();
    }
    log_line("fit " + key.hex());
    CallTrace::note("fit");
    model_cache.put(key, entry);
    return entry;
}

// A call's cells and model argument -> the key of the model they gave. Only
// calls whose ranges were read without error are recorded, so a hit repeats what
// reading them would give; the model itself stays in model_cache (an evicted
// model is fitted again through the full path), so memory stays bounded as before.
struct CallEntry {
    Hash128 model_key;
    Hash128 panel_key;  // PanelInput::hash, the key of panel_cache
    bool header = false;
    std::size_t n = 0;
    std::vector<std::string> warnings;  // PanelInput::warnings
    bool placed = false;
};
LruCache<CallEntry> call_cache(16);

void hash_cell(Hasher& h, const Cell& c) {
    h.add_u64(static_cast<std::uint64_t>(c.kind));
    if (c.is_number()) h.add_double(c.number);
    if (c.is_text()) h.add_string(c.text);
}

// The cells key plus every cell of the model argument, as given (not its
// canonical text: that is checked only after the ranges have been read).
Hash128 call_key_of(const Hash128& cells, const Arg& model_arg) {
    Hasher h;
    h.add_u64(cells.a);
    h.add_u64(cells.b);
    h.add_u64(model_arg.given ? 1 : 0);
    h.add_u64(model_arg.table.rows);
    h.add_u64(model_arg.table.cols);
    h.add_u64(model_arg.table.given_rows);
    h.add_u64(model_arg.table.cells.size());
    for (const Cell& c : model_arg.table.cells) hash_cell(h, c);
    return h.digest();
}

const char* const fit_prefix = "weft fit ";
constexpr std::size_t fit_name_digits = 32;

int hex_digit(char c) {
    if (c >= '0' && c <= '9') return c - '0';
    if (c >= 'a' && c <= 'f') return c - 'a' + 10;
    if (c >= 'A' && c <= 'F') return c - 'A' + 10;
    return -1;
}

// The model key a fit cell's text names ("weft fit <32 hex digits> (...)").
// A fit cell that shows an error passes that error on unchanged.
Hash128 fit_key_of(const Arg& fit) {
    const char* how = "give the cell that holds =WEFT.FIT(outcome; regressors; units; periods; "
                      "model), e.g. F1";
    if (!fit.given) fail(std::string("fit is missing; ") + how);
    if (!fit.is_scalar())
        fail("fit is a range of " + std::to_string(fit.table.rows * fit.table.cols) +
             " cells; " + how);
    const Cell& c = fit.scalar();
    const std::string text = c.is_text() ? trim(c.text) : std::string();
    if (text.rfind("weft:", 0) == 0) throw UserError(UserError::FullText{}, text);
    const std::size_t p = std::char_traits<char>::length(fit_prefix);
    bool ok = text.size() >= p + fit_name_digits && lower(text.substr(0, p)) == fit_prefix;
    Hash128 key;
    for (std::size_t i = 0; ok && i < fit_name_digits; ++i) {
        const int d = hex_digit(text[p + i]);
        if (d < 0) ok = false;
        std::uint64_t& word = i < 16 ? key.a : key.b;
        word = (word << 4) | static_cast<std::uint64_t>(d < 0 ? 0 : d);
    }
    if (ok && text.size() > p + fit_name_digits && hex_digit(text[p + fit_name_digits]) >= 0)
        ok = false;
    if (!ok) {
        // (a reference to a blank cell arrives as the number 0)
        const std::string shown =
            c.is_number() ? (c.number == 0.0 ? std::string("0 (or is blank)") : format_number(c.number))
            : c.is_text() ? quoted(text.substr(0, 40) + (text.size() > 40 ? "..." : ""))
                          : std::string("nothing");
        fail("fit holds " + shown + ", not a fit; " + how);
    }
    return key;
}

// Everything a model function needs: the input (for row alignment and names)
// and the fitted model. Holds the lock while the model is used.
struct Fitted {
    std::unique_lock<std::mutex> lock{cache_mutex};
    PanelInput input;
    std::shared_ptr<ModelEntry> entry;
    const weft_model* model = nullptr;
    Hash128 model_key;
    std::shared_ptr<PanelEntry> panel;  // from a fit cell: the fit's panel

    // From the four ranges and the model argument.
    Fitted(const PanelSource& source, const Arg& model_arg) {
        const Hash128* cells = source.cells_key();
        Hash128 call_key;
        if (cells != nullptr) {
            call_key = call_key_of(*cells, model_arg);
            entry = shortcut(call_key);
        }
        CallTrace::mark("lookup");
        if (!entry) {
            input = read_panel(source.ranges(), false, cells);
            input_read = true;
            CallTrace::mark("read");
            entry = cached_model(input, model_text(model_arg), model_key);
            CallTrace::mark("model");
            if (cells != nullptr)
                call_cache.put(call_key, std::make_shared<CallEntry>(CallEntry{
                                             model_key, input.hash, input.header, input.n,
                                             input.warnings, input.placed}));
        }
        if (!entry->error.empty()) throw UserError(UserError::FullText{}, entry->error);
        model = entry->model.get();
    }

    // The panel of these ranges (for the tests that fit other estimators on it):
    // from panel_cache, else read from the source once more.
    std::shared_ptr<PanelEntry> panel_entry(const PanelSource& source) {
        if (input_read) return cached_panel(input);
        if (auto hit = panel_cache.find(input.hash)) return hit;
        input = read_panel(source.ranges(), false, source.cells_key());
        input_read = true;
        return cached_panel(input);
    }

    // From a fit cell (WEFT.FIT): nothing is read or fitted here.
    explicit Fitted(const Arg& fit) {
        model_key = fit_key_of(fit);
        const std::shared_ptr<FitEntry> kept = fit_cache.find(model_key);
        CallTrace::mark("lookup");
        if (!kept)
            fail("the fit " + model_key.hex().substr(0, 8) +
                 "... is not in memory: newer fits replaced it (weft keeps the " +
                 std::to_string(kFitsKept) +
                 " newest, fewer when they are large); recalculate all cells with "
                 "Ctrl+Shift+F9 (Data > Calculate > Recalculate Hard) to fit it again");
        log_line("hit " + model_key.hex());
        CallTrace::note("hit-fit");
        entry = kept->entry;
        panel = kept->panel;
        input.header = kept->header;
        input.n = kept->n;
        input.warnings = kept->warnings;
        input.placed = kept->placed;
        model = entry->model.get();
    }

private:
    bool input_read = false;  // input holds the columns (not only what a shortcut keeps)

    // The model this call found the last time these cells and this model argument
    // were passed, if it is still cached; fills what the results need of the input.
    std::shared_ptr<ModelEntry> shortcut(const Hash128& call_key) {
        const std::shared_ptr<CallEntry> call = call_cache.find(call_key);
        if (!call) return nullptr;
        std::shared_ptr<ModelEntry> found = model_cache.find(call->model_key);
        if (!found) return nullptr;
        log_line("hit " + call->model_key.hex());
        CallTrace::note("hit-cells");
        model_key = call->model_key;
        input.hash = call->panel_key;
        input.header = call->header;
        input.n = call->n;
        input.warnings = call->warnings;
        input.placed = call->placed;
        return found;
    }
};

// Which model a function reports on: the four ranges and a model argument, or a
// fit cell.
struct ModelRef {
    const PanelSource* source = nullptr;
    const Arg* model = nullptr;
    const Arg* fit = nullptr;
};

Fitted fitted_of(const ModelRef& r) {
    if (r.fit != nullptr) return Fitted(*r.fit);
    return Fitted(*r.source, *r.model);
}

// The warnings about the cells, then the fit's own (for the layouts that do not
// list the fit's warnings themselves).
std::vector<std::string> all_warnings(const Fitted& f) {
    std::vector<std::string> out = f.input.warnings;
    size_t n = 0;
    check(weft_model_warning_count(f.model, &n));
    for (size_t i = 0; i < n; ++i) {
        const char* w = nullptr;
        check(weft_model_warning(f.model, i, &w));
        if (w != nullptr && *w != '\0') out.emplace_back(w);
    }
    return out;
}

// Warnings in view for the ranges passed as cells; a 0.3 layout otherwise.
OutTable shown(bool placed, OutTable t, const std::vector<std::string>& warnings) {
    return placed ? in_view(std::move(t), warnings) : t;
}

// ----------------------------------------------------------- result layouts

// Two columns, label and value; a value that cannot be computed (NaN) says so
// in words rather than showing #NUM! or a blank that looks like zero.
class LabelValue {
public:
    void number(const std::string& label, double v) { rows_.push_back({label, true, v, ""}); }
    void text(const std::string& label, const std::string& v) {
        rows_.push_back({label, false, 0.0, v});
    }
    OutTable table() const {
        OutTable t(rows_.size(), 2);
        for (std::size_t r = 0; r < rows_.size(); ++r) {
            t.set(r, 0, rows_[r].label);
            if (!rows_[r].is_number)
                t.set(r, 1, rows_[r].text);
            else if (std::isfinite(rows_[r].number))
                t.set(r, 1, rows_[r].number);
            else
                t.set(r, 1, std::string("not available"));
        }
        return t;
    }

private:
    struct Row {
        std::string label;
        bool is_number;
        double number;
        std::string text;
    };
    std::vector<Row> rows_;
};

// The warnings of the test just run, as a last row (only when there are any).
void add_test_warnings(LabelValue& lv) {
    const std::string w = weft_test_warnings();
    if (!w.empty()) lv.text("warnings", w);
}

// One column aligned to the input rows: a label in the header row (if the
// ranges had one), then value or blank per data row.
OutTable aligned_column(bool header, const std::string& label, const std::vector<double>& v,
                        const std::vector<unsigned char>& none) {
    const std::size_t start = header ? 1 : 0;
    OutTable t(v.size() + start, 1);
    if (header) t.set(0, 0, label);
    for (std::size_t i = 0; i < v.size(); ++i)
        if (!none[i]) t.set_number_or_blank(start + i, 0, v[i]);
    return t;
}

using RowValues = int (*)(const weft_model*, double*, unsigned char*, size_t, size_t*);

OutTable model_column(const ModelRef& ref, RowValues get, const char* label) {
    Fitted f = fitted_of(ref);
    std::vector<double> v(f.input.n);
    std::vector<unsigned char> none(f.input.n, 1);
    size_t needed = 0;
    check(get(f.model, v.data(), none.data(), v.size(), &needed));
    return shown(f.input.placed, aligned_column(f.input.header, label, v, none), all_warnings(f));
}

// Optional text argument: omitted, blank or a blank reference (0) give "".
std::string optional_word(const Arg& a, const char* name, const char* example) {
    if (!a.given) return "";
    if (!a.is_scalar())
        fail(std::string(name) + " is a range of several cells; give one word, e.g. " + example);
    const Cell& c = a.scalar();
    if (c.is_blank()) return "";
    if (c.is_number()) {
        if (c.number == 0.0) return "";
        fail(std::string(name) + " is the number " + format_number(c.number) +
             "; give a word, e.g. " + example);
    }
    return trim(c.text);
}

weft_options parse_options(const std::string& text) {
    weft_options o = WEFT_OPTIONS_INIT;
    check(weft_options_parse(&o, text.c_str()));
    return o;
}

// Whole number argument k of DIFF and LAG.
int integer_arg(const Arg& a, const char* name, int fallback) {
    if (!a.given) return fallback;
    if (!a.is_scalar()) fail(std::string(name) + " is a range; give one whole number");
    const Cell& c = a.scalar();
    if (c.is_blank()) return fallback;
    if (c.is_text()) {
        char* end = nullptr;
        const std::string s = trim(c.text);
        const double v = std::strtod(s.c_str(), &end);
        if (s.empty() || end == nullptr || *end != '\0')
            fail(std::string(name) + " is the text " + quoted(c.text) + "; give a whole number, e.g. 1");
        Cell n;
        n.kind = Cell::Kind::number;
        n.number = v;
        Arg again;
        again.given = true;
        again.table.rows = again.table.cols = 1;
        again.table.cells.push_back(n);
        return integer_arg(again, name, fallback);
    }
    if (c.number != std::floor(c.number))
        fail(std::string(name) + " is " + format_number(c.number) +
             "; give a whole number of periods, e.g. 1");
    if (std::fabs(c.number) > 1e6)
        fail(std::string(name) + " is " + format_number(c.number) +
             ", more periods than any panel has; give a small whole number, e.g. 1");
    return static_cast<int>(c.number);
}

// ------------------------------------------------------ transforms' input

struct TransformInput {
    bool header = false;
    std::size_t n = 0;
    std::size_t first_row = 1;
    std::string values_name;
    NumericColumn values;
};

// The header rule of the helper functions: row 1 is a header when the first cell
// of the column that must be numeric (values, or periods) is text.
std::size_t common_rows(std::initializer_list<const Table*> tables) {
    std::size_t rows = std::numeric_limits<std::size_t>::max();
    for (const Table* t : tables) rows = std::min(rows, t->rows);
    return rows;
}

PanelPtr transform_panel(std::size_t start, std::size_t end, const Table* units,
                         const Table* periods, TextCells* scan) {
    weft_panel* raw = nullptr;
    check(weft_panel_new(&raw, end - start, start + 1));
    PanelPtr p(raw);
    if (units != nullptr) set_units(p.get(), read_units(*units, start, end));
    if (periods != nullptr) {
        NumericColumn t = read_numbers(*periods, 0, start, end, scan, "periods");
        check(weft_panel_set_periods(p.get(), t.values.data(), t.missing.data()));
    }
    return p;
}

using Transform = int (*)(const weft_panel*, const double*, const unsigned char*, int, double*,
                          unsigned char*, size_t);

OutTable run_transform(const Table& values_in, const Table& units_in, const Table* periods_in,
                       int k, bool use_k, const std::string& label_prefix) {
    require_one_column(values_in, "values", "the numbers to transform");
    require_one_column(units_in, "units", "the unit id of each row");
    require_same_rows(units_in, "units", values_in, "values");
    if (periods_in != nullptr) {
        require_one_column(*periods_in, "periods", "the period of each row");
        require_same_rows(*periods_in, "periods", values_in, "values");
    }
    const std::size_t rows = periods_in != nullptr
                                 ? common_rows({&values_in, &units_in, periods_in})
                                 : common_rows({&values_in, &units_in});
    const Table &values = values_in, &units = units_in;
    if (periods_in != nullptr)
        require_same_start({{"values", &values}, {"units", &units}, {"periods", periods_in}});
    else
        require_same_start({{"values", &values}, {"units", &units}});
    const bool header = rows > 0 && values.at(0, 0).is_text();
    if (periods_in != nullptr) require_consistent_headers({"values", &values}, header, {{"periods", periods_in}});
    require_data_rows(rows, header);
    const std::size_t start = header ? 1 : 0;
    const std::size_t n = rows - start;

    std::unique_lock<std::mutex> lock(cache_mutex);
    TextCells scan;
    PanelPtr p = transform_panel(start, rows, &units, periods_in, &scan);
    NumericColumn v = read_numbers(values, 0, start, rows, &scan, "values");
    std::vector<double> out(n);
    std::vector<unsigned char> none(n, 1);
    if (use_k) {
        const Transform f = label_prefix.rfind("diff", 0) == 0 ? weft_panel_diff : weft_panel_lag;
        check(f(p.get(), v.values.data(), v.missing.data(), k, out.data(), none.data(), n));
    } else {
        check(weft_panel_demean(p.get(), v.values.data(), v.missing.data(), out.data(),
                                none.data(), n));
    }
    const std::string name = header ? header_text(values.at(0, 0)) : std::string();
    return shown(values.place() != nullptr, aligned_column(header, label_prefix + " " + name, out, none),
                 scan.warnings());
}

}  // namespace

// =================================================================== functions

namespace {

// The header of WEFT.ESTIMATES in the project's own words; the interval columns say
// the model's level, e.g. "90% interval from" at level=0.90.
std::vector<std::string> estimates_header(const weft_model* model) {
    weft_options o = WEFT_OPTIONS_INIT;
    check(weft_model_options(model, &o));
    char percent[32];
    std::snprintf(percent, sizeof percent, "%.10g%%", 100.0 * o.level);
    return {"term", "coefficient", "standard error", "t ratio", "two-sided p",
            std::string(percent) + " interval from", std::string(percent) + " interval to"};
}

// Each model function once, for either way of naming the model (ModelRef).
OutTable estimates_of(const ModelRef& ref) {
    Fitted f = fitted_of(ref);
    size_t n_terms = 0, n_dropped = 0;
    check(weft_model_term_count(f.model, &n_terms));
    check(weft_model_dropped_count(f.model, &n_dropped));
    std::vector<double> coef(n_terms * WEFT_COEF_COLUMNS);
    size_t needed = 0;
    check(weft_model_coefficients(f.model, coef.data(), coef.size(), &needed));

    OutTable t(1 + n_terms + n_dropped, 1 + WEFT_COEF_COLUMNS);
    const std::vector<std::string> headers = estimates_header(f.model);
    for (std::size_t c = 0; c < headers.size(); ++c) t.set(0, c, headers[c]);
    for (std::size_t r = 0; r < n_terms; ++r) {
        const char* name = nullptr;
        check(weft_model_term_name(f.model, r, &name));
        t.set(1 + r, 0, std::string(name));
        for (std::size_t c = 0; c < WEFT_COEF_COLUMNS; ++c) {
            const double v = coef[r * WEFT_COEF_COLUMNS + c];
            if (std::isfinite(v))
                t.set(1 + r, 1 + c, v);
            else
                t.set(1 + r, 1 + c, std::string("not available"));
        }
    }
    // Dropped terms are listed, never printed as numbers, so nobody wonders
    // where a regressor went.
    for (std::size_t d = 0; d < n_dropped; ++d) {
        const char* term = nullptr;
        const char* reason = nullptr;
        check(weft_model_dropped(f.model, d, &term, &reason));
        t.set(1 + n_terms + d, 0, std::string(term ? term : ""));
        t.set(1 + n_terms + d, 1, std::string("dropped: ") + (reason ? reason : ""));
    }
    return shown(f.input.placed, std::move(t), all_warnings(f));
}

OutTable summary_of(const ModelRef& ref) {
    Fitted f = fitted_of(ref);
    size_t n_items = 0;
    check(weft_model_summary_count(f.model, &n_items));
    LabelValue lv;
    for (std::size_t i = 0; i < n_items; ++i) {
        weft_summary_item item;
        check(weft_model_summary_item(f.model, i, &item));
        const std::string label = item.label ? item.label : "";
        if (item.kind == WEFT_ITEM_NUMBER)
            lv.number(label, item.number);
        else
            lv.text(label, item.text ? item.text : "");
    }
    return shown(f.input.placed, lv.table(), f.input.warnings);
}

OutCell value_of(const ModelRef& ref, const Arg& what_arg, const Arg& term_arg) {
    const std::string what = lower(optional_word(what_arg, "what", "\"estimate\""));
    if (what.empty())
        fail("WEFT.VALUE needs what: one of estimate, se, t, p, ci-low, ci-high (with a term), "
             "n, units, periods, r2, adj-r2, corr2-rows, corr2-means, corr2-deviations, sigma, "
             "df (a term's with a term), "
             "df-residual, f, f-df1, f-df2, f-p (the joint test of all regressors), classical-f, "
             "classical-f-df1, classical-f-df2, classical-f-p, ssr, clusters, rows-dropped");
    std::string term;
    if (term_arg.given && !term_arg.is_scalar())
        fail("term is a range of several cells; give one term name, e.g. \"intercept\"");
    const Cell& tc = term_arg.scalar();
    if (tc.is_text()) term = trim(tc.text);
    else if (tc.is_number() && term_arg.given) term = format_number(tc.number);

    Fitted f = fitted_of(ref);
    double v = std::numeric_limits<double>::quiet_NaN();
    check(weft_model_value(f.model, what.c_str(), term.empty() ? nullptr : term.c_str(), &v));
    OutCell out;
    if (std::isfinite(v)) {
        out.kind = OutCell::Kind::number;
        out.number = v;
    } else {
        weft_options o = WEFT_OPTIONS_INIT;
        check(weft_model_options(f.model, &o));
        static const char* const names[] = {"pooled", "fd", "within", "random", "between"};
        const char* est = (o.estimator >= 0 && o.estimator <= 4) ? names[o.estimator] : "this";
        // Say why when the fit knows (e.g. an exact fit leaves t undefined).
        size_t n_warnings = 0;
        const char* warning = nullptr;
        check(weft_model_warning_count(f.model, &n_warnings));
        if (n_warnings > 0) check(weft_model_warning(f.model, 0, &warning));
        out.kind = OutCell::Kind::text;
        out.text = "weft: " + what + " is not available for this " + est + " model; " +
                   (warning != nullptr && *warning != '\0'
                        ? std::string(warning)
                        : std::string("use WEFT.SUMMARY to see what this model reports"));
    }
    return out;
}



OutTable joint_of(const ModelRef& ref, const Arg& terms) {
    // Collect the names first, so a bad terms argument is reported before a fit.
    std::vector<std::string> names;
    bool single_list = false;
    if (terms.given) {
        for (const Cell& c : terms.table.cells) {
            if (c.is_text() && !trim(c.text).empty()) names.push_back(trim(c.text));
            else if (c.is_number() && !(terms.is_scalar() && c.number == 0.0))
                names.push_back(format_number(c.number));
        }
        single_list = terms.is_scalar();
    }
    if (names.empty())
        fail("WEFT.JOINT needs terms: the terms to test, as a text such as \"value, capital\" or "
             "a range of term names");

    Fitted f = fitted_of(ref);
    weft_wald_result r;
    if (single_list) {
        check(weft_test_joint_list(f.model, names[0].c_str(), &r));
    } else {
        std::vector<const char*> ptrs;
        for (const std::string& s : names) ptrs.push_back(s.c_str());
        check(weft_test_joint(f.model, ptrs.data(), ptrs.size(), &r));
    }
    LabelValue lv;
    lv.number("F", r.f);
    lv.number("F df1", r.f_df1);
    lv.number("F df2", r.f_df2);
    lv.number("F p-value", r.f_p);
    lv.number("chi-square", r.chi2);
    lv.number("chi-square df", r.chi2_df);
    lv.number("chi-square p-value", r.chi2_p);
    add_test_warnings(lv);
    return shown(f.input.placed, lv.table(), f.input.warnings);
}

OutTable hetero_of(const ModelRef& ref, const Arg& form_arg) {
    const std::string word = lower(optional_word(form_arg, "form", "\"koenker\""));
    int form = WEFT_HETERO_KOENKER;
    check(weft_hetero_form_parse(word.c_str(), &form));
    Fitted f = fitted_of(ref);
    weft_hetero_result r;
    check(weft_test_hetero(f.model, form, &r));
    LabelValue lv;
    lv.number("LM", r.lm);
    lv.number("LM df", r.lm_df);
    lv.number("LM p-value", r.lm_p);
    lv.number("F", r.f);
    lv.number("F df1", r.f_df1);
    lv.number("F df2", r.f_df2);
    lv.number("F p-value", r.f_p);
    add_test_warnings(lv);
    return shown(f.input.placed, lv.table(), f.input.warnings);
}

OutTable serial_of(const ModelRef& ref) {
    Fitted f = fitted_of(ref);
    weft_serial_result r;
    check(weft_test_serial(f.model, &r));
    LabelValue lv;
    lv.number("AR(1) slope", r.slope);
    lv.number("std error", r.se);
    lv.number("t", r.t);
    lv.number("p-value", r.p);
    lv.number("df", r.df);
    lv.number("pairs", r.pairs);
    lv.number("level errors: slope if uncorrelated", r.level_null);
    lv.number("level errors: cluster std error", r.level_se);
    lv.number("level errors: F", r.level_f);
    lv.number("level errors: F df1", r.level_df1);
    lv.number("level errors: F df2", r.level_df2);
    lv.number("level errors: F p-value", r.level_p);
    add_test_warnings(lv);
    return shown(f.input.placed, lv.table(), f.input.warnings);
}

// WEFT.BOOTSTRAP: label and value rows (FUNCTIONS.md). settings: one cell of words,
// or a range whose non-blank cells are words.
OutTable bootstrap_of(const ModelRef& ref, const Arg& term_arg, const Arg& settings_arg) {
    std::string term;
    if (term_arg.given && !term_arg.is_scalar())
        fail("term is a range of several cells; give one term name, e.g. \"x1\"");
    const Cell& tc = term_arg.scalar();
    if (term_arg.given && tc.is_text()) term = trim(tc.text);
    else if (term_arg.given && tc.is_number()) term = format_number(tc.number);
    if (term.empty()) fail("WEFT.BOOTSTRAP needs term: the name of the term to test, e.g. \"x1\"");
    std::string settings;
    if (settings_arg.given)
        for (const Cell& c : settings_arg.table.cells) {
            if (c.is_text()) settings += " " + c.text;
            else if (c.is_number() && !(settings_arg.is_scalar() && c.number == 0.0))
                fail("settings holds the number " + format_number(c.number) +
                     "; give words such as \"draws=9999 seed=1 null=0\"");
        }
    Fitted f = fitted_of(ref);
    weft_bootstrap_result r;
    check(weft_test_bootstrap(f.model, term.c_str(), settings.c_str(), &r));
    const auto end = [](double v) { return std::isfinite(v) ? v : std::numeric_limits<double>::quiet_NaN(); };
    LabelValue lv;
    lv.text("term", term);
    lv.number("estimate", r.estimate);
    lv.number("value tested", r.null_value);
    lv.number("bootstrap p-value", r.p);
    if (std::isfinite(r.ci_low)) lv.number("interval low", end(r.ci_low));
    else lv.text("interval low", "unbounded");
    if (std::isfinite(r.ci_high)) lv.number("interval high", end(r.ci_high));
    else lv.text("interval high", "unbounded");
    lv.number("draws", r.draws);
    lv.text("weights", r.weights == WEFT_BOOT_WEBB ? "Webb six-point" : "Rademacher");
    lv.text("every sign pattern used", r.enumerated ? "yes" : "no");
    lv.number(r.by_period ? "clusters (periods)" : "clusters (units)", r.clusters);
    add_test_warnings(lv);
    return shown(f.input.placed, lv.table(), f.input.warnings);
}

}  // namespace

OutCell fn_fit(const PanelSource& in, const Arg& model) {
    Fitted f(in, model);
    if (!fit_cache.find(f.model_key)) {
        size_t terms = 0;
        check(weft_model_term_count(f.model, &terms));
        fit_cache.put(f.model_key,
                      std::make_shared<FitEntry>(
                          FitEntry{f.entry, f.panel_entry(in), f.input.header, f.input.n,
                                   f.input.warnings, f.input.placed}),
                      f.input.n * (terms + 3));
    }
    weft_options o = WEFT_OPTIONS_INIT;
    check(weft_model_options(f.model, &o));
    size_t needed = 0;
    check(weft_options_text(&o, nullptr, 0, &needed));
    std::vector<char> words(needed + 1, '\0');
    check(weft_options_text(&o, words.data(), words.size(), &needed));
    double used = 0.0;
    check(weft_model_value(f.model, "n", nullptr, &used));
    OutCell out;
    out.kind = OutCell::Kind::text;
    out.text = fit_prefix + f.model_key.hex() + " (" + std::string(words.data()) + "; " +
               format_number(used) + " observations from " + std::to_string(f.input.n) + " rows)";
    return out;
}

OutTable fn_estimates(const PanelSource& in, const Arg& model) { return estimates_of({&in, &model, nullptr}); }
OutTable fn_summary(const PanelSource& in, const Arg& model) { return summary_of({&in, &model, nullptr}); }
OutCell fn_value(const PanelSource& in, const Arg& model, const Arg& what, const Arg& term) {
    return value_of({&in, &model, nullptr}, what, term);
}
OutTable fn_residuals(const PanelSource& in, const Arg& model) {
    return model_column({&in, &model, nullptr}, weft_model_residuals, "residual");
}
OutTable fn_fitted(const PanelSource& in, const Arg& model) {
    return model_column({&in, &model, nullptr}, weft_model_fitted, "fitted");
}
OutTable fn_joint(const PanelSource& in, const Arg& model, const Arg& terms) {
    return joint_of({&in, &model, nullptr}, terms);
}
OutTable fn_hetero(const PanelSource& in, const Arg& model, const Arg& form) {
    return hetero_of({&in, &model, nullptr}, form);
}
OutTable fn_serial(const PanelSource& in, const Arg& model) { return serial_of({&in, &model, nullptr}); }

OutTable fn_fit_estimates(const Arg& fit) { return estimates_of({nullptr, nullptr, &fit}); }
OutTable fn_fit_summary(const Arg& fit) { return summary_of({nullptr, nullptr, &fit}); }
OutCell fn_fit_value(const Arg& fit, const Arg& what, const Arg& term) {
    return value_of({nullptr, nullptr, &fit}, what, term);
}
OutTable fn_fit_residuals(const Arg& fit) {
    return model_column({nullptr, nullptr, &fit}, weft_model_residuals, "residual");
}
OutTable fn_fit_fitted(const Arg& fit) {
    return model_column({nullptr, nullptr, &fit}, weft_model_fitted, "fitted");
}
OutTable fn_fit_joint(const Arg& fit, const Arg& terms) { return joint_of({nullptr, nullptr, &fit}, terms); }
OutTable fn_fit_hetero(const Arg& fit, const Arg& form) { return hetero_of({nullptr, nullptr, &fit}, form); }
OutTable fn_fit_serial(const Arg& fit) { return serial_of({nullptr, nullptr, &fit}); }
OutTable fn_bootstrap(const PanelSource& in, const Arg& model, const Arg& term, const Arg& settings) {
    return bootstrap_of({&in, &model, nullptr}, term, settings);
}
OutTable fn_fit_bootstrap(const Arg& fit, const Arg& term, const Arg& settings) {
    return bootstrap_of({nullptr, nullptr, &fit}, term, settings);
}
OutTable fn_bootstrap(const PanelRanges& in, const Arg& model, const Arg& term, const Arg& settings) {
    return fn_bootstrap(TableSource(in), model, term, settings);
}

namespace {

// Hausman and the unit-effects test compare with fits that take no weights (random
// effects; the core refuses them too): say so before reading anything else.
[[noreturn]] void refuse_weights(const char* function) {
    fail(std::string(function) +
         " does not take weights: it compares with random effects or pooled fits that weft does not "
         "weight; remove weights= from the model, or judge the weighted within fit by its cluster "
         "standard errors");
}

OutTable hausman_table(const weft_panel* panel, const weft_options& o) {
    weft_hausman_result r;
    check(weft_test_hausman(panel, &o, &r));
    LabelValue lv;
    lv.number("statistic", r.statistic);
    lv.number("df", r.df);
    lv.number("p-value", r.p);
    lv.number("rank of the covariance difference", r.rank);
    lv.text("within less precise than random in every direction", r.positive_definite ? "yes" : "no");
    lv.number("robust F", r.robust.f);
    lv.number("robust F df1", r.robust.f_df1);
    lv.number("robust F df2", r.robust.f_df2);
    lv.number("robust F p-value", r.robust.f_p);
    lv.number("robust chi-square", r.robust.chi2);
    lv.number("robust chi-square df", r.robust.chi2_df);
    lv.number("robust chi-square p-value", r.robust.chi2_p);
    add_test_warnings(lv);
    return lv.table();
}

OutTable effects_table(const weft_panel* panel, const weft_options& o) {
    weft_effects_result r;
    check(weft_test_effects(panel, &o, &r));
    LabelValue lv;
    lv.number("F", r.f);
    lv.number("df1", r.df1);
    lv.number("df2", r.df2);
    lv.number("p-value", r.p);
    add_test_warnings(lv);
    return lv.table();
}

// The panel and model options of a fit cell, for the tests that fit other
// estimators on the fit's panel (with its model words).
template <class Table>
OutTable on_fit_panel(const Arg& fit, Table table, const char* function) {
    Fitted f(fit);
    double weighted = 0;
    check(weft_model_value(f.model, "weighted", nullptr, &weighted));
    if (weighted == 1.0) refuse_weights(function);
    weft_options o = WEFT_OPTIONS_INIT;
    check(weft_model_options(f.model, &o));
    return shown(f.input.placed, table(panel_or_throw(*f.panel), o), f.input.warnings);
}

}  // namespace

OutTable fn_hausman(const PanelSource& in, const Arg& model) {
    std::unique_lock<std::mutex> lock(cache_mutex);
    const PanelInput input = read_panel(in.ranges());
    if (!split_weights_word(model_text(model)).weights.empty()) refuse_weights("WEFT.HAUSMAN");
    const weft_options o = parse_options(model_text(model));
    return shown(input.placed, hausman_table(panel_or_throw(*cached_panel(input)), o), input.warnings);
}

OutTable fn_effects(const PanelSource& in, const Arg& model) {
    std::unique_lock<std::mutex> lock(cache_mutex);
    const PanelInput input = read_panel(in.ranges());
    if (!split_weights_word(model_text(model)).weights.empty()) refuse_weights("WEFT.EFFECTS");
    const weft_options o = parse_options(model_text(model));
    return shown(input.placed, effects_table(panel_or_throw(*cached_panel(input)), o), input.warnings);
}

OutTable fn_fit_hausman(const Arg& fit) { return on_fit_panel(fit, hausman_table, "WEFT.FIT.HAUSMAN"); }
OutTable fn_fit_effects(const Arg& fit) { return on_fit_panel(fit, effects_table, "WEFT.FIT.EFFECTS"); }

// Over plain tables: no cells key, so the ranges are always read.
OutCell fn_fit(const PanelRanges& in, const Arg& model) { return fn_fit(TableSource(in), model); }
OutTable fn_estimates(const PanelRanges& in, const Arg& model) { return fn_estimates(TableSource(in), model); }
OutTable fn_summary(const PanelRanges& in, const Arg& model) { return fn_summary(TableSource(in), model); }
OutCell fn_value(const PanelRanges& in, const Arg& model, const Arg& what, const Arg& term) {
    return fn_value(TableSource(in), model, what, term);
}
OutTable fn_residuals(const PanelRanges& in, const Arg& model) { return fn_residuals(TableSource(in), model); }
OutTable fn_fitted(const PanelRanges& in, const Arg& model) { return fn_fitted(TableSource(in), model); }
OutTable fn_joint(const PanelRanges& in, const Arg& model, const Arg& terms) {
    return fn_joint(TableSource(in), model, terms);
}
OutTable fn_hetero(const PanelRanges& in, const Arg& model, const Arg& form) {
    return fn_hetero(TableSource(in), model, form);
}
OutTable fn_serial(const PanelRanges& in, const Arg& model) { return fn_serial(TableSource(in), model); }
OutTable fn_hausman(const PanelRanges& in, const Arg& model) { return fn_hausman(TableSource(in), model); }
OutTable fn_effects(const PanelRanges& in, const Arg& model) { return fn_effects(TableSource(in), model); }

OutTable fn_diff(const Table& values, const Table& units, const Table& periods, const Arg& k) {
    const int steps = integer_arg(k, "k", 1);
    // The header says k (x(t) - x(t-k)); k = 1 keeps the 0.3 header "diff <name>".
    return run_transform(values, units, &periods, steps, true,
                         steps == 1 ? std::string("diff") : "diff over " + std::to_string(steps) + " periods");
}

OutTable fn_lag(const Table& values, const Table& units, const Table& periods, const Arg& k) {
    const int steps = integer_arg(k, "k", 1);
    return run_transform(values, units, &periods, steps, true, "lag " + std::to_string(steps));
}

OutTable fn_demean(const Table& values, const Table& units) {
    return run_transform(values, units, nullptr, 0, false, "demeaned");
}

OutTable fn_dummies(const Table& periods_in, const Arg& omit_first) {
    require_one_column(periods_in, "periods", "the period of each row");
    int omit = 0;
    if (omit_first.given) {
        if (!omit_first.is_scalar()) fail("omit_first is a range; give TRUE, FALSE, 1 or 0");
        const Cell& c = omit_first.scalar();
        if (c.is_number())
            omit = c.number != 0.0 ? 1 : 0;
        else if (c.is_text()) {
            const std::string w = lower(trim(c.text));
            if (w == "true" || w == "yes") omit = 1;
            else if (w == "false" || w == "no" || w.empty()) omit = 0;
            else fail("omit_first is the text " + quoted(c.text) + "; give TRUE, FALSE, 1 or 0");
        }
    }
    const std::size_t rows = periods_in.rows;
    const bool header = rows > 0 && periods_in.at(0, 0).is_text();
    require_data_rows(rows, header);
    const std::size_t start = header ? 1 : 0;
    const std::size_t n = rows - start;

    std::unique_lock<std::mutex> lock(cache_mutex);
    TextCells scan;
    PanelPtr p = transform_panel(start, rows, nullptr, &periods_in, &scan);
    size_t cols = 0;
    check(weft_panel_dummy_periods(p.get(), omit, nullptr, 0, &cols));
    std::vector<double> labels(cols);
    check(weft_panel_dummy_periods(p.get(), omit, labels.data(), labels.size(), &cols));
    size_t needed = 0;
    check(weft_panel_dummies(p.get(), omit, nullptr, 0, &needed));
    std::vector<double> block(needed);
    check(weft_panel_dummies(p.get(), omit, block.data(), block.size(), &needed));
    if (cols == 0) fail("periods has a single period; with omit_first there is no column left");

    // The header row of labels takes the place of the input's header row, so the
    // block lines up with the data when the ranges have a header.
    OutTable t(1 + n, cols);
    for (std::size_t j = 0; j < cols; ++j)
        t.set(0, j, "period " + format_number(labels[j]));
    for (std::size_t i = 0; i < n; ++i)
        for (std::size_t j = 0; j < cols; ++j) t.set_number_or_blank(1 + i, j, block[i * cols + j]);
    return shown(periods_in.place() != nullptr, std::move(t), scan.warnings());
}

OutTable fn_panel(const Table& units_in, const Table& periods_in) {
    require_one_column(units_in, "units", "the unit id of each row");
    require_one_column(periods_in, "periods", "the period of each row");
    require_same_start({{"units", &units_in}, {"periods", &periods_in}});
    require_same_rows(periods_in, "periods", units_in, "units");
    const std::size_t rows = common_rows({&units_in, &periods_in});
    const Table &units = units_in, &periods = periods_in;
    const bool header = rows > 0 && periods.at(0, 0).is_text();
    require_data_rows(rows, header);
    const std::size_t start = header ? 1 : 0;

    std::unique_lock<std::mutex> lock(cache_mutex);
    TextCells scan;
    PanelPtr p = transform_panel(start, rows, &units, &periods, &scan);
    weft_structure s;
    check(weft_panel_structure(p.get(), &s));
    LabelValue lv;
    lv.number("units", static_cast<double>(s.units));
    lv.number("periods", static_cast<double>(s.periods));
    lv.number("rows", static_cast<double>(s.rows));
    lv.text("balanced", s.balanced ? "yes" : "no");
    lv.number("min periods per unit", static_cast<double>(s.min_periods));
    lv.number("median periods per unit", s.median_periods);
    lv.number("max periods per unit", static_cast<double>(s.max_periods));
    lv.number("gaps", static_cast<double>(s.gaps));
    lv.number("duplicate unit-period pairs", static_cast<double>(s.duplicates));
    lv.number("single-row units", static_cast<double>(s.single_row_units));
    lv.number("rows without unit or period", static_cast<double>(s.rows_missing));
    return shown(periods.place() != nullptr, lv.table(), scan.warnings());
}

std::string fn_version() {
    std::string text = std::string("weft library ") + weft_version_text() + ", Calc add-in " +
                       WEFT_ADDIN_VERSION;
    if (weft_version_number() != WEFT_VERSION_NUMBER)
        text += " (built against weft.h " WEFT_VERSION "; reinstall the matching add-in)";
    return text;
}


PanelRead read_panel_ranges(const PanelRanges& in, bool regressors_optional) {
    const PanelInput p = read_panel(in, regressors_optional);
    PanelRead out;
    // copied: the event functions' models outlive this input
    out.panel = std::shared_ptr<weft_panel>(make_panel(p, false).release(), weft_panel_free);
    out.header = p.header;
    out.n = p.n;
    out.first_row = p.first_row;
    out.hash = p.hash;
    return out;
}

// The words of an argument of words (the model text, the event functions' design):
// omitted, a blank reference (which Calc passes as 0) or "" give the defaults; a range
// of words is read as the words of its cells; a number is refused, naming `what`.
std::string words_text(const Arg& words, const char* what, const char* example) {
    if (!words.given) return "";
    std::string text;
    for (const Cell& c : words.table.cells) {
        if (c.is_blank()) continue;
        if (c.is_number()) {
            if (c.number == 0.0 && words.is_scalar()) continue;
            throw UserError(std::string(what) + " is the number " + format_number(c.number) + "; give the " +
                            what + " as text, e.g. " + example);
        }
        if (!text.empty()) text += ' ';
        text += c.text;
    }
    return text;
}

}  // namespace weft_addin
