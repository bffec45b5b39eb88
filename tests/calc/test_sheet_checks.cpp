// The sheet checks of issue 20 without an office: placed tables stand for ranges the
// office passed as cells. Expected texts: FUNCTIONS.md "Errors in cells" (cells named
// by address, Data!D57) and the README's "Ranges are cells" and "Warnings" rules; the
// addresses are worked out by hand from the placements below.
#include "cells.hpp"
#include "functions.hpp"
#include "sheet_checks.hpp"
#include "suggest.hpp"
#include "warnings_view.hpp"

#if __has_include(<catch2/catch_test_macros.hpp>)
#include <catch2/catch_test_macros.hpp>
#else
#include <catch2/catch.hpp>  // Debian 12 ships Catch2 v2
#endif

#include <functional>
#include <string>
#include <vector>

using namespace weft_addin;

namespace {

Cell num(double v) {
    Cell c;
    c.kind = Cell::Kind::number;
    c.number = v;
    return c;
}

Cell txt(const std::string& s) {
    Cell c;
    c.kind = Cell::Kind::text;
    c.text = s;
    return c;
}

// One column placed on sheet `sheet` from (row, col), zero-based.
Table column(const std::vector<Cell>& cells, const std::string& sheet, std::size_t row, std::size_t col) {
    Table t;
    t.rows = t.given_rows = cells.size();
    t.cols = 1;
    t.cells = cells;
    t.placed = true;
    t.where.sheet = sheet;
    t.where.row = row;
    t.where.col = col;
    return t;
}

std::string error_of(const std::function<void()>& f) {
    try {
        f();
    } catch (const UserError& e) {
        return e.what();
    }
    return "";
}

bool has(const std::string& text, const std::string& part) { return text.find(part) != std::string::npos; }

// Three units over three periods with a header row at sheet row 1 (zero-based 0).
struct Panel {
    Table y, x, u, t;
};

Panel panel(std::size_t x_row = 0) {
    std::vector<Cell> y{txt("y")}, x{txt("x")}, u{txt("unit")}, t{txt("year")};
    const double ys[] = {1, 3, 2, 5, 4, 7, 2, 2, 6}, xs[] = {0, 1, 1, 2, 2, 3, 0, 1, 2};
    for (int i = 0; i < 9; ++i) {
        y.push_back(num(ys[i]));
        x.push_back(num(xs[i]));
        u.push_back(num(1 + i / 3));
        t.push_back(num(2001 + i % 3));
    }
    return {column(y, "Data", 0, 2), column(x, "Data", x_row, 3), column(u, "Data", 0, 0),
            column(t, "Data", 0, 1)};
}

}  // namespace

TEST_CASE("cell addresses are written as Sheet!A1, quoted when the sheet name is not a word") {
    Place p;
    p.sheet = "Data";
    p.row = 56;
    p.col = 3;
    CHECK(cell_address(p, 0, 0) == "Data!D57");
    CHECK(cell_address(p, 1, 24) == "Data!AB58");
    p.sheet = "Q1 data";
    CHECK(cell_address(p, 0, 0) == "'Q1 data'!D57");
    CHECK(range_address(p, 10, 2) == "'Q1 data'!D57:E66");
}

TEST_CASE("ranges that start on different sheet rows are refused, naming both starts") {
    Panel p = panel(1);  // regressors one row lower: D2 instead of D1
    const std::string e = error_of([&] { fn_estimates({p.y, p.x, p.u, p.t}, Arg()); });
    CHECK(has(e, "outcome starts at Data!C1 but regressors starts at Data!D2, 1 row lower"));
    CHECK(has(e, "Data!D1:D10"));
}

TEST_CASE("header rules name the cell") {
    Panel p = panel();
    p.x.cells[0] = num(3.5);
    CHECK(has(error_of([&] { fn_estimates({p.y, p.x, p.u, p.t}, Arg()); }),
              "regressors starts with the number 3.5 (Data!D1)"));
    Panel q = panel();
    q.y.cells[0] = Cell();  // blank outcome header, regressors headed
    CHECK(has(error_of([&] { fn_estimates({q.y, q.x, q.u, q.t}, Arg()); }),
              "regressors starts with the header \"x\" (Data!D1)"));
}

TEST_CASE("numbers and dates stored as text are refused; other text is a warning") {
    CHECK(reads_as_number("-1.2"));
    CHECK(reads_as_number(" -1,25 "));
    CHECK(reads_as_number("1 234,5"));
    CHECK(reads_as_number("3e-2"));
    CHECK_FALSE(reads_as_number("n/a"));
    CHECK_FALSE(reads_as_number("North 7"));
    CHECK_FALSE(reads_as_number("nan"));
    CHECK(reads_as_date("2019-03-01"));
    CHECK(reads_as_date("01/03/2019"));
    CHECK_FALSE(reads_as_date("2019"));

    Panel p = panel();
    p.x.cells[4] = txt("-1.2");
    CHECK(has(error_of([&] { fn_estimates({p.y, p.x, p.u, p.t}, Arg()); }),
              "Data!D5 (in regressors) holds \"-1.2\", a number stored as text"));
    Panel q = panel();
    q.x.cells[4] = txt("n/a");
    const OutTable t = fn_estimates({q.y, q.x, q.u, q.t}, Arg());
    REQUIRE(t.rows == 4);  // header, intercept, x, one warning row
    CHECK(t.cells[0].text == "term [warning in row 4]");
    CHECK(t.cells[21].text == "warning");
    CHECK(has(t.cells[22].text, "1 cell of regressors holds text, read as missing (first: Data!D5 \"n/a\")"));
}

TEST_CASE("an error value is refused with its cell and name") {
    Panel p = panel();
    p.u.cells[7].kind = Cell::Kind::error;
    p.u.cells[7].text = "#N/A";
    CHECK(has(error_of([&] { fn_estimates({p.y, p.x, p.u, p.t}, Arg()); }),
              "Data!A8 (in units) holds the error value #N/A"));
}

TEST_CASE("a regressor equal to the outcome is warned about") {
    Panel p = panel();
    Table two;
    two.rows = two.given_rows = p.y.rows;
    two.cols = 2;
    two.placed = true;
    two.where = p.x.where;
    for (std::size_t r = 0; r < p.y.rows; ++r) {
        two.cells.push_back(p.x.cells[r]);
        two.cells.push_back(p.y.cells[r]);
    }
    const OutTable s = fn_summary({p.y, two, p.u, p.t}, Arg());
    bool found = false;
    for (std::size_t r = 0; r < s.rows; ++r)
        if (s.cells[r * 2].text == "warning" && has(s.cells[r * 2 + 1].text, "regressor \"y\" (column 2 of regressors) equals the outcome"))
            found = true;
    CHECK(found);
}

TEST_CASE("a mistyped word gets the nearest accepted word") {
    CHECK(nearest_word("perods", "pooled, fd, within; periods; level=0.95") == "periods");
    CHECK(nearest_word("withn", "pooled, fd, within") == "within");
    CHECK(nearest_word("levl=0.9", "level=0.95, periods") == "level=0.9");
    CHECK(nearest_word("zzzzzz", "pooled, fd, within") == "");
    CHECK(with_suggestion("weft: model: unknown word \"perods\"; accepted words are: pooled, periods") ==
          "weft: model: unknown word \"perods\" (did you mean \"periods\"?); accepted words are: pooled, periods");
}

TEST_CASE("an error result fills its first cell and leaves the rest blank") {
    const OutTable e = error_table("weft: something");
    CHECK(e.rows == kErrorRows);
    CHECK(e.cols == kErrorCols);
    CHECK(e.cells[0].text == "weft: something");
    for (std::size_t i = 1; i < e.cells.size(); ++i) CHECK(e.cells[i].kind == OutCell::Kind::blank);
}

TEST_CASE("WEFT.DIFF's header says k") {
    Panel p = panel();
    Arg k;
    k.given = true;
    k.table.rows = k.table.cols = k.table.given_rows = 1;
    k.table.cells.push_back(num(2));
    const OutTable d = fn_diff(p.y, p.u, p.t, k);
    CHECK(d.cells[0].text == "diff over 2 periods y");
    // unit 1: y(2003) - y(2001) = 2 - 1 (sheet rows 4 and 2)
    CHECK(d.cells[3].number == 1.0);
}
