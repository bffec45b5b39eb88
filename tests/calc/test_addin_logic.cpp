// The add-in's cell logic without an office: functions.cxx over plain tables, the
// input hash, the LRU cache and the wizard-text table. Fast, and runs under the
// sanitizer builds, which the office cannot.
//
// Expected values: tests/data/panel/grunfeld_within.json and grunfeld_pooled.json
// (R plm/sandwich/lmtest, see the README there), named beside each check; cell
// rules from FUNCTIONS.md.
#include "cache.hpp"
#include "cells.hpp"
#include "functions.hpp"
#include "texts.hpp"
#include "weights.hpp"

#if __has_include(<catch2/catch_test_macros.hpp>)
#include <catch2/catch_test_macros.hpp>
#else
#include <catch2/catch.hpp>  // Debian 12 ships Catch2 v2
#endif
#include <nlohmann/json.hpp>

#include <cctype>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <functional>
#include <sstream>
#include <string>
#include <vector>

using namespace weft_addin;
namespace {

bool rel_close(double actual, double expected, double rel = 1e-9) {
    return std::fabs(actual - expected) <= rel * std::fabs(expected);
}

bool contains(const std::string& s, const std::string& part) {
    return s.find(part) != std::string::npos;
}

bool starts_with(const std::string& s, const std::string& part) { return s.rfind(part, 0) == 0; }

Cell num(double v) {
    Cell c;
    c.kind = Cell::Kind::number;
    c.number = v;
    return c;
}

Cell text(const std::string& s) {
    Cell c;
    c.kind = Cell::Kind::text;
    c.text = s;
    return c;
}

Table table(const std::vector<std::vector<Cell>>& rows) {
    Table t;
    t.rows = t.given_rows = rows.size();
    t.cols = rows.empty() ? 0 : rows.front().size();
    for (const auto& r : rows) t.cells.insert(t.cells.end(), r.begin(), r.end());
    return t;
}

Arg word(const std::string& s) {
    Arg a;
    a.given = true;
    a.table = table({{text(s)}});
    return a;
}

// grunfeld.csv as four tables (header row included): inv, value:capital, firm, year.
struct Grunfeld {
    Table inv, x, firm, year;
};

Grunfeld grunfeld(bool header) {
    std::ifstream in(WEFT_TEST_DATA "/grunfeld.csv");
    REQUIRE(in.good());
    std::string line;
    std::vector<std::vector<Cell>> y, x, u, t;
    bool first = true;
    while (std::getline(in, line)) {
        std::vector<std::string> f;
        std::stringstream ss(line);
        std::string part;
        while (std::getline(ss, part, ',')) f.push_back(part);
        if (first) {
            first = false;
            if (!header) continue;
            u.push_back({text(f[0])});
            t.push_back({text(f[1])});
            y.push_back({text(f[2])});
            x.push_back({text(f[3]), text(f[4])});
            continue;
        }
        u.push_back({num(std::stod(f[0]))});
        t.push_back({num(std::stod(f[1]))});
        y.push_back({num(std::stod(f[2]))});
        x.push_back({num(std::stod(f[3])), num(std::stod(f[4]))});
    }
    return {table(y), table(x), table(u), table(t)};
}

nlohmann::json reference(const std::string& name) {
    std::ifstream in(std::string(WEFT_TEST_DATA) + "/" + name);
    REQUIRE(in.good());
    return nlohmann::json::parse(in);
}

// The "fit <hash>" and "hit <hash>" lines of a WEFT_ADDIN_LOG file.
struct LogCounts {
    int fits = 0;
    int hits = 0;
};

LogCounts log_counts(const std::string& path) {
    std::ifstream in(path);
    std::string line;
    LogCounts n;
    while (std::getline(in, line)) {
        if (line.rfind("fit ", 0) == 0) ++n.fits;
        if (line.rfind("hit ", 0) == 0) ++n.hits;
    }
    return n;
}

std::string error_of(const std::function<void()>& f) {
    try {
        f();
    } catch (const UserError& e) {
        return e.what();
    }
    return "(no error)";
}

}  // namespace

TEST_CASE("estimates with a header row use the header names and match the reference") {
    const Grunfeld g = grunfeld(true);
    const OutTable t = fn_estimates({g.inv, g.x, g.firm, g.year}, word("within cluster"));
    const auto ref = reference("grunfeld_within.json")["results"];
    REQUIRE(t.rows == 3);
    REQUIRE(t.cols == 7);
    CHECK(t.cells[7].text == "value");
    CHECK(t.cells[14].text == "capital");
    // grunfeld_within.json results.coef.value and results.se.CR1.value
    CHECK(rel_close(t.cells[8].number, ref["coef"]["value"].get<double>()));
    CHECK(rel_close(t.cells[9].number, ref["se"]["CR1"]["value"].get<double>()));
}

TEST_CASE("without a header row the terms are x1, x2") {
    const Grunfeld g = grunfeld(false);
    const OutTable t = fn_estimates({g.inv, g.x, g.firm, g.year}, Arg());
    REQUIRE(t.rows == 4);
    CHECK(t.cells[7].text == "intercept");
    CHECK(t.cells[14].text == "x1");
    CHECK(t.cells[21].text == "x2");
    // grunfeld_pooled.json results.coef.value (pooled is the default estimator)
    const auto pooled = reference("grunfeld_pooled.json")["results"];
    CHECK(rel_close(t.cells[15].number, pooled["coef"]["value"].get<double>()));
}

TEST_CASE("residuals align to the input rows with a header label and blanks for dropped rows") {
    Grunfeld g = grunfeld(true);
    g.inv.cells[5] = text("n/a");  // sheet row 6: text in a number column is missing
    const OutTable r = fn_residuals({g.inv, g.x, g.firm, g.year}, word("pooled"));
    // plain tables stand for the value-array methods of 0.3 workbooks: their layout
    // has no warning rows (test_sheet_checks.cpp covers the ranges passed as cells)
    REQUIRE(r.rows == 201);
    CHECK(r.cells[0].text == "residual");
    CHECK(r.cells[5].kind == OutCell::Kind::blank);
    CHECK(r.cells[4].kind == OutCell::Kind::number);
    CHECK(r.cells[6].kind == OutCell::Kind::number);
    const OutCell dropped = fn_value({g.inv, g.x, g.firm, g.year}, word("pooled"),
                                     word("rows-dropped"), Arg());
    CHECK(dropped.number == 1.0);
}

TEST_CASE("bad shapes and arguments give weft: messages that name the problem") {
    const Grunfeld g = grunfeld(true);
    Table short_units = g.firm;
    short_units.given_rows = short_units.rows = 200;
    short_units.cells.resize(200);
    CHECK(starts_with(error_of([&] { fn_estimates({g.inv, g.x, short_units, g.year}, Arg()); }),
                      "weft: units has 200 rows but outcome has 201"));
    CHECK(starts_with(error_of([&] { fn_estimates({g.x, g.x, g.firm, g.year}, Arg()); }),
                      "weft: outcome has 2 columns"));
    Arg five;
    five.given = true;
    five.table = table({{num(5)}});
    CHECK(contains(error_of([&] { fn_estimates({g.inv, g.x, g.firm, g.year}, five); }),
             "model is the number 5"));
    Table empty;
    empty.cols = 1;
    empty.given_rows = 201;
    CHECK(contains(error_of([&] { fn_estimates({empty, g.x, g.firm, g.year}, Arg()); }),
             "ranges are empty"));
    CHECK(contains(error_of([&] { fn_joint({g.inv, g.x, g.firm, g.year}, Arg(), Arg()); }),
             "needs terms"));
    CHECK(contains(error_of([&] { fn_diff(g.inv, g.firm, g.year, word("abc")); }),
             "k is the text \"abc\""));
}

TEST_CASE("a number id and the same id as text are one unit") {
    // unit 7 (number) and "7" (text) in period 2001: a repeated unit-period pair
    const Table y = table({{num(1)}, {num(2)}, {num(3)}, {num(4)}});
    const Table x = table({{num(1)}, {num(5)}, {num(2)}, {num(7)}});
    const Table u = table({{num(7)}, {text("7")}, {text("North 1")}, {text("North 1")}});
    const Table t = table({{num(2001)}, {num(2001)}, {num(2001)}, {num(2002)}});
    CHECK(contains(error_of([&] { fn_estimates({y, x, u, t}, Arg()); }),
             "unit \"7\" has two rows for period 2001 (rows 1 and 2)"));
}

TEST_CASE("dummies: a label row, one column per period after the first") {
    const Table t = table({{text("year")}, {num(2001)}, {num(2002)}, {num(2001)}, {num(2003)}});
    Arg omit;
    omit.given = true;
    omit.table = table({{num(1)}});
    const OutTable d = fn_dummies(t, omit);
    REQUIRE(d.rows == 5);
    REQUIRE(d.cols == 2);
    CHECK(d.cells[0].text == "period 2002");
    CHECK(d.cells[1].text == "period 2003");
    CHECK(d.cells[2].number == 0.0);  // 2001
    CHECK(d.cells[4].number == 1.0);  // 2002 in the 2002 column
    CHECK(d.cells[9].number == 1.0);  // 2003 in the 2003 column
}

TEST_CASE("the input hash separates what the cache must not confuse") {
    auto digest = [](std::initializer_list<double> v, const std::string& s) {
        Hasher h;
        for (double d : v) h.add_double(d);
        h.add_string(s);
        return h.digest();
    };
    CHECK(digest({1, 2}, "within") == digest({1, 2}, "within"));
    CHECK_FALSE(digest({1, 2}, "within") == digest({2, 1}, "within"));
    CHECK_FALSE(digest({1, 2}, "within") == digest({1, 2}, "within "));
    CHECK_FALSE(digest({0.0}, "") == digest({-0.0}, ""));
    Hasher a, b;
    a.add_string("ab");
    a.add_string("c");
    b.add_string("a");
    b.add_string("bc");
    CHECK_FALSE(a.digest() == b.digest());
}

TEST_CASE("the LRU cache keeps the most recently used entries") {
    LruCache<int> cache(2);
    auto key = [](std::uint64_t k) {
        Hash128 h;
        h.a = k;
        return h;
    };
    cache.put(key(1), std::make_shared<int>(1));
    cache.put(key(2), std::make_shared<int>(2));
    REQUIRE(cache.find(key(1)));  // 1 is now the most recent
    cache.put(key(3), std::make_shared<int>(3));
    CHECK(cache.find(key(2)) == nullptr);
    CHECK(*cache.find(key(1)) == 1);
    CHECK(*cache.find(key(3)) == 3);
}

TEST_CASE("every function has wizard texts and a display name WEFT.<METHOD>") {
    // FUNCTIONS.md lists 16 functions; the fit cell adds WEFT.FIT and its ten functions;
    // few-cluster inference adds WEFT.BOOTSTRAP and WEFT.FIT.BOOTSTRAP
    // policy evaluation adds WEFT.EVENT and WEFT.DID
    REQUIRE(function_texts().size() == 31);
    for (const FunctionText& f : function_texts()) {
        // fitEstimates -> FIT.ESTIMATES: a capital inside the method name starts a new word
        std::string upper;
        for (const char* m = f.method; *m != '\0'; ++m) {
            if (m != f.method && std::isupper(static_cast<unsigned char>(*m))) upper += '.';
            upper += static_cast<char>(std::toupper(static_cast<unsigned char>(*m)));
        }
        CHECK(std::string(f.display) == "WEFT." + upper);
        CHECK(std::string(f.description).size() > 30);
        for (const ArgumentText& a : f.arguments) CHECK(std::string(a.description).size() > 15);
        CHECK(find_by_display(upper == "VALUE" ? "weft.value" : f.display) == &f);
        CHECK(find_by_method(f.method) == &f);
    }
    CHECK(find_by_method("nothing") == nullptr);
}

TEST_CASE("model texts that mean the same model share one fit") {
    const std::string log = std::string(WEFT_TEST_BINARY_DIR) + "/addin_logic_fits.log";
    std::remove(log.c_str());
    REQUIRE(setenv("WEFT_ADDIN_LOG", log.c_str(), 1) == 0);
    const Grunfeld g = grunfeld(true);
    // a model no other test case fits, so the cache cannot already hold it
    const OutCell a = fn_value({g.inv, g.x, g.firm, g.year}, word("fd hc3 level=0.9"),
                               word("se"), word("value"));
    const OutCell b = fn_value({g.inv, g.x, g.firm, g.year}, word("level=0.90,HC3  fd"),
                               word("se"), word("value"));
    unsetenv("WEFT_ADDIN_LOG");
    CHECK(a.number == b.number);
    const LogCounts counts = log_counts(log);
    CHECK(counts.fits == 1);
    CHECK(counts.hits == 1);
    std::remove(log.c_str());
}

TEST_CASE("a specification test's warnings come as a last 'warnings' row") {
    // white-full on x and x^2: the square of x repeats the x^2 column, so weft drops
    // it from the auxiliary regression and says so (CONVENTIONS.md, White 1980 terms)
    std::vector<std::vector<Cell>> y, x, u, t;
    for (int i = 0; i < 30; ++i) {
        const double v = 1.0 + 0.37 * i;
        y.push_back({num(2.0 + v + 0.1 * ((i * 7) % 5))});
        x.push_back({num(v), num(v * v)});
        u.push_back({num(i / 5)});
        t.push_back({num(2000 + i % 5)});
    }
    const OutTable h = fn_hetero({table(y), table(x), table(u), table(t)}, Arg(),
                                 word("white-full"));
    REQUIRE(h.rows == 8);
    CHECK(h.cells[14].text == "warnings");
    CHECK_FALSE(h.cells[15].text.empty());
    const OutTable k = fn_hetero({table(y), table(x), table(u), table(t)}, Arg(), Arg());
    CHECK(k.rows == 7);  // koenker: no warning
}

namespace {

// Tables with a cells key of the test's choosing; counts how often they are read.
class KeyedSource : public PanelSource {
public:
    KeyedSource(const PanelRanges& in, Hash128 key) : in_(in), key_(key) {}
    const Hash128* cells_key() const override { return &key_; }
    PanelRanges ranges() const override {
        ++reads;
        return in_;
    }
    mutable int reads = 0;

private:
    PanelRanges in_;
    Hash128 key_;
};

}  // namespace

TEST_CASE("a call with a known cells key and model argument skips reading the ranges") {
    const Grunfeld g = grunfeld(true);
    const auto ref = reference("grunfeld_pooled.json")["results"];
    // keys and a model text no other test case uses, so the caches start empty of them
    KeyedSource src({g.inv, g.x, g.firm, g.year}, Hash128{0x5eed0001u, 0x5eed0002u});
    const OutCell first = fn_value(src, word("pooled hc2 level=0.8"), word("estimate"),
                                   word("value"));
    CHECK(src.reads == 1);
    // grunfeld_pooled.json results.coef.value
    CHECK(rel_close(first.number, ref["coef"]["value"].get<double>()));

    // same key, same model argument: answered without reading
    const OutTable table = fn_estimates(src, word("pooled hc2 level=0.8"));
    CHECK(src.reads == 1);
    REQUIRE(table.rows == 4);
    CHECK(table.cells[14].text == "value");
    CHECK(table.cells[15].number == first.number);
    // grunfeld_pooled.json results.se.HC2.value
    CHECK(rel_close(table.cells[16].number, ref["se"]["HC2"]["value"].get<double>()));

    // another model argument (even one meaning the same model) reads the ranges again
    fn_value(src, word("hc2 pooled level=0.8"), word("estimate"), word("value"));
    CHECK(src.reads == 2);

    // ranges that fail to read are never remembered: every call reads them again
    Table short_units = g.firm;
    short_units.given_rows = short_units.rows = 200;
    short_units.cells.resize(200);
    KeyedSource bad({g.inv, g.x, short_units, g.year}, Hash128{0x5eed0003u, 0x5eed0004u});
    const std::string e1 = error_of([&] { fn_estimates(bad, word("pooled hc2 level=0.8")); });
    const std::string e2 = error_of([&] { fn_estimates(bad, word("pooled hc2 level=0.8")); });
    CHECK(starts_with(e1, "weft: units has 200 rows but outcome has 201"));
    CHECK(e1 == e2);
    CHECK(bad.reads == 2);
}

// ------------------------------------------------------------- the fit cell

namespace {

Arg cell_arg(const Cell& c) {
    Arg a;
    a.given = true;
    a.table = table({{c}});
    return a;
}

std::string cells_text(const OutTable& t) {
    std::string s;
    for (const OutCell& c : t.cells)
        s += (c.kind == OutCell::Kind::number ? std::to_string(c.number) : c.text) + "|";
    return s;
}

}  // namespace

TEST_CASE("a fit cell names the fit, and the WEFT.FIT functions answer as the range functions do") {
    const Grunfeld g = grunfeld(true);
    const PanelRanges in{g.inv, g.x, g.firm, g.year};
    const Arg model = word("within cluster");
    const OutCell name = fn_fit(in, model);
    REQUIRE(name.kind == OutCell::Kind::text);
    // "weft fit <32 hex digits> (<canonical model words>; <n> observations from <rows> rows)"
    CHECK(starts_with(name.text, "weft fit "));
    CHECK(contains(name.text, "within"));
    // grunfeld_within.json sample.nobs 200; grunfeld_fd.json sample.nobs 190 differences
    CHECK(contains(name.text, "200 observations from 200 rows)"));
    CHECK(contains(fn_fit(in, word("fd")).text, "190 observations from 200 rows)"));
    const Arg fit = cell_arg(text(name.text));

    const OutTable est = fn_fit_estimates(fit);
    const auto ref = reference("grunfeld_within.json")["results"];
    REQUIRE(est.rows == 3);
    // grunfeld_within.json results.coef.value and results.se.CR1.value
    CHECK(rel_close(est.cells[8].number, ref["coef"]["value"].get<double>()));
    CHECK(rel_close(est.cells[9].number, ref["se"]["CR1"]["value"].get<double>()));
    CHECK(cells_text(est) == cells_text(fn_estimates(in, model)));
    CHECK(cells_text(fn_fit_summary(fit)) == cells_text(fn_summary(in, model)));
    CHECK(fn_fit_value(fit, word("se"), word("capital")).number ==
          fn_value(in, model, word("se"), word("capital")).number);
    CHECK(cells_text(fn_fit_residuals(fit)) == cells_text(fn_residuals(in, model)));
    CHECK(cells_text(fn_fit_fitted(fit)) == cells_text(fn_fitted(in, model)));
    CHECK(cells_text(fn_fit_joint(fit, word("value, capital"))) ==
          cells_text(fn_joint(in, model, word("value, capital"))));
    CHECK(cells_text(fn_fit_hetero(fit, word("bp"))) == cells_text(fn_hetero(in, model, word("bp"))));
    CHECK(cells_text(fn_fit_serial(fit)) == cells_text(fn_serial(in, model)));
    CHECK(cells_text(fn_fit_hausman(fit)) == cells_text(fn_hausman(in, model)));
    CHECK(cells_text(fn_fit_effects(fit)) == cells_text(fn_effects(in, model)));
    // with period effects the tests use them too
    const Arg periods = word("within periods");
    const Arg fit_p = cell_arg(text(fn_fit(in, periods).text));
    CHECK(cells_text(fn_fit_hausman(fit_p)) == cells_text(fn_hausman(in, periods)));
    CHECK(cells_text(fn_fit_effects(fit_p)) == cells_text(fn_effects(in, periods)));
    CHECK(cells_text(fn_fit_hausman(fit_p)) != cells_text(fn_hausman(in, model)));

    // Other data or other model words: another name.
    CHECK(fn_fit(in, word("within")).text != name.text);
    Grunfeld h = g;
    h.inv.cells[3] = num(h.inv.cells[3].number + 1.0);
    CHECK(fn_fit({h.inv, h.x, h.firm, h.year}, model).text != name.text);
    // The same model written otherwise: the same name.
    CHECK(fn_fit(in, word("cluster  within")).text == name.text);
}

TEST_CASE("a fit argument that is not a fit cell gets a weft: message that says what to give") {
    const Grunfeld g = grunfeld(true);
    CHECK(contains(error_of([] { fn_fit_estimates(Arg()); }), "fit is missing"));
    CHECK(contains(error_of([] { fn_fit_estimates(cell_arg(num(3))); }), "fit holds 3, not a fit"));
    CHECK(contains(error_of([] { fn_fit_estimates(cell_arg(num(0))); }), "fit holds 0 (or is blank)"));
    CHECK(contains(error_of([] { fn_fit_summary(word("within")); }),
                   "fit holds \"within\", not a fit; give the cell that holds =WEFT.FIT("));
    CHECK(contains(error_of([] { fn_fit_serial(word("weft fit 12ab")); }), "not a fit"));
    CHECK(contains(error_of([] { fn_fit_serial(word(std::string("weft fit ") + std::string(33, 'a'))); }),
                   "not a fit"));
    Arg range;
    range.given = true;
    range.table = table({{text("a")}, {text("b")}});
    CHECK(contains(error_of([&] { fn_fit_estimates(range); }), "fit is a range of 2 cells"));
    // A fit cell that shows an error passes that error on, word for word.
    const std::string bad = error_of([&] { fn_fit({g.inv, g.x, g.firm, g.year}, word("wihtin")); });
    REQUIRE(starts_with(bad, "weft: "));
    CHECK(contains(bad, "wihtin"));
    CHECK(error_of([&] { fn_fit_estimates(word(bad)); }) == bad);
    // A well-formed name of a fit nobody made (or one no longer kept).
    const std::string unknown = std::string("weft fit ") + std::string(32, '0') + " (pooled)";
    CHECK(contains(error_of([&] { fn_fit_value(word(unknown), word("n"), Arg()); }),
                   "is not in memory"));
    CHECK(contains(error_of([&] { fn_fit_value(word(unknown), word("n"), Arg()); }),
                   "Ctrl+Shift+F9"));
}

TEST_CASE("fit cells stay answerable while fewer than 32 newer fits were made") {
    const Grunfeld g = grunfeld(true);
    const PanelRanges in{g.inv, g.x, g.firm, g.year};
    std::vector<std::string> models;
    for (const char* e : {"pooled", "fd", "within", "pooled periods"})
        for (const char* v : {"classical", "hc0", "hc1", "hc2", "hc3", "cluster", "cluster0", "dk"})
            models.push_back(std::string(e) + " " + v);
    REQUIRE(models.size() == 32);
    const std::string first = fn_fit(in, word(models[0])).text;
    for (std::size_t i = 1; i < 32; ++i) fn_fit(in, word(models[i]));
    // 31 newer fits: the first is still kept; using it makes it the newest, so
    // the next new fit replaces the second-oldest instead
    CHECK(fn_fit_value(word(first), word("n"), Arg()).number == 200.0);
    const std::string second = fn_fit(in, word(models[1])).text;  // kept: no new fit
    for (std::size_t i = 2; i < 32; ++i) fn_fit(in, word(models[i]));
    CHECK(fn_fit_value(word(first), word("n"), Arg()).number == 200.0);
    fn_fit(in, word("random"));
    CHECK(fn_fit_value(word(first), word("n"), Arg()).number == 200.0);
    CHECK(contains(error_of([&] { fn_fit_value(word(second), word("n"), Arg()); }),
                   "is not in memory: newer fits replaced it"));
}

TEST_CASE("the LRU cache also keeps its total cost under a bound, but always the newest") {
    LruCache<int> c(10, 100);
    auto key = [](std::uint64_t k) { Hash128 h; h.a = k; return h; };
    c.put(key(1), std::make_shared<int>(1), 40);
    c.put(key(2), std::make_shared<int>(2), 40);
    CHECK(c.size() == 2);
    c.put(key(3), std::make_shared<int>(3), 40);  // 120 > 100: the oldest goes
    CHECK(c.size() == 2);
    CHECK(c.find(key(1)) == nullptr);
    CHECK(c.find(key(2)) != nullptr);
    c.put(key(4), std::make_shared<int>(4), 500);  // over the bound alone: kept alone
    CHECK(c.size() == 1);
    CHECK(*c.find(key(4)) == 4);
}

TEST_CASE("a range function finds the model a fit cell holds after the model cache let it go") {
    const std::string log = std::string(WEFT_TEST_BINARY_DIR) + "/addin_logic_fit_cell.log";
    std::remove(log.c_str());
    const Grunfeld g = grunfeld(true);
    const PanelRanges in{g.inv, g.x, g.firm, g.year};
    // a model no other test case fits
    const Arg model = word("within hc2 level=0.8");
    const OutCell name = fn_fit(in, model);
    REQUIRE(starts_with(name.text, "weft fit "));
    // nine other models through the range functions: more than the 8-model cache holds
    for (const char* w : {"pooled hc0 level=0.8", "pooled hc1 level=0.8", "pooled hc2 level=0.8",
                          "pooled hc3 level=0.8", "fd hc0 level=0.8", "fd hc1 level=0.8",
                          "fd hc2 level=0.8", "fd hc3 level=0.8", "within hc0 level=0.8"})
        fn_value(in, word(w), word("n"), Arg());
    REQUIRE(setenv("WEFT_ADDIN_LOG", log.c_str(), 1) == 0);
    const OutCell by_ranges = fn_value(in, model, word("se"), word("value"));
    unsetenv("WEFT_ADDIN_LOG");
    CHECK(by_ranges.number == fn_fit_value(word(name.text), word("se"), word("value")).number);
    const LogCounts counts = log_counts(log);
    CHECK(counts.fits == 0);
    CHECK(counts.hits == 1);
    std::remove(log.c_str());
}

TEST_CASE("weights=NAME is kept apart from the other model words and survives the cache key") {
    // split_weights_word: the word keeps its column name's case; two names conflict
    const ModelWords w = split_weights_word("within, weights=Households cluster");
    CHECK(w.weights == "Households");
    CHECK(w.rest == "within cluster");
    CHECK(split_weights_word("pooled").weights.empty());
    CHECK_THROWS_AS(split_weights_word("weights=a weights=b"), UserError);
    CHECK(weight_column({"value", "Capital"}, "capital") == 1);
    CHECK(weight_column({"value", ""}, "x2") == 1);
    CHECK(weight_column({"value"}, "pop") == std::string::npos);
    // the weighted and unweighted fits of the same ranges differ (the word is not lost in
    // the canonical text), and the weight column leaves the regressors: "capital" as the
    // weights leaves "value" the only slope (an identity: weights all equal to one
    // number would give the unweighted value-only fit; here they are not equal)
    const Grunfeld g = grunfeld(true);
    const OutCell plain = fn_value({g.inv, g.x, g.firm, g.year}, word("pooled"), word("se"), word("value"));
    const OutCell weighted =
        fn_value({g.inv, g.x, g.firm, g.year}, word("pooled weights=capital"), word("se"), word("value"));
    REQUIRE(plain.text.empty());
    REQUIRE(weighted.text.empty());
    CHECK(plain.number != weighted.number);
    std::string message;
    try {
        fn_value({g.inv, g.x, g.firm, g.year}, word("pooled weights=capital"), word("se"), word("capital"));
    } catch (const UserError& e) {
        message = e.what();
    }
    CHECK(message.find("no term \"capital\"") != std::string::npos);
}
