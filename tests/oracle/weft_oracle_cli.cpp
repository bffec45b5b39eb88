// weft_oracle_cli: the weft side of the live oracle test (run_oracle.py).
//
// Usage: weft_oracle_cli panel.csv cases.txt out.json
//
// panel.csv: header "unit,period,outcome,regressor...", one row per observation; an
// empty cell is missing. cases.txt: one model text per line ("within periods"). For each
// case the program fits the model once per standard-error family and writes, in the
// layout oracle_reference.R writes, the coefficients, every family's standard errors and
// joint Wald test of the regressors, a general restriction, the four
// heteroskedasticity forms, the serial check, and (random) the Hausman tests or (within)
// the unit-effects F test. A weft::Error is written under "errors" with its message, so
// the driver can say why a number is missing. It links weft::core only (not the C
// interface), so that it checks the library itself.
#include <cmath>
#include <cstdio>
#include <fstream>
#include <iostream>
#include <map>
#include <sstream>
#include <string>
#include <vector>

#include "weft/core.hpp"
#include "weft/spec.hpp"

namespace {

// A minimal JSON writer: objects of numbers, strings, booleans and objects.
class Json {
public:
    Json& key(const std::string& k) {
        comma();
        out_ << quote(k) << ":";
        fresh_ = true;
        return *this;
    }
    Json& open() {
        comma();
        out_ << "{";
        fresh_ = true;
        return *this;
    }
    Json& close() {
        out_ << "}";
        fresh_ = false;
        return *this;
    }
    Json& number(double v) {
        comma();
        if (std::isfinite(v)) {
            char buf[40];
            std::snprintf(buf, sizeof buf, "%.17g", v);
            out_ << buf;
        } else {
            out_ << "null";
        }
        fresh_ = false;
        return *this;
    }
    Json& boolean(bool v) {
        comma();
        out_ << (v ? "true" : "false");
        fresh_ = false;
        return *this;
    }
    Json& text(const std::string& s) {
        comma();
        out_ << quote(s);
        fresh_ = false;
        return *this;
    }
    Json& field(const std::string& k, double v) { return key(k).number(v); }
    std::string str() const { return out_.str(); }

private:
    void comma() {
        if (!fresh_) out_ << ",";
        fresh_ = false;
    }
    static std::string quote(const std::string& s) {
        std::string q = "\"";
        for (char c : s) {
            if (c == '"' || c == '\\') q += '\\';
            if (static_cast<unsigned char>(c) < 0x20) { q += ' '; continue; }
            q += c;
        }
        return q + "\"";
    }
    std::ostringstream out_;
    bool fresh_ = true;
};

std::vector<std::string> split_csv_line(const std::string& line) {
    std::vector<std::string> cells;
    std::string cell;
    bool quoted = false;
    for (char c : line) {
        if (c == '"') { quoted = !quoted; continue; }
        if (c == ',' && !quoted) { cells.push_back(cell); cell.clear(); continue; }
        if (c == '\r') continue;
        cell += c;
    }
    cells.push_back(cell);
    return cells;
}

weft::PanelData read_panel(const std::string& path, std::vector<std::string>& x_names) {
    std::ifstream in(path);
    if (!in) throw std::runtime_error("cannot open " + path);
    std::string line;
    std::getline(in, line);
    const auto header = split_csv_line(line);
    if (header.size() < 4) throw std::runtime_error(path + ": need unit, period, outcome, regressors");
    weft::PanelData data;
    data.units.name = header[0];
    data.periods.name = header[1];
    data.outcome.name = header[2];
    for (std::size_t j = 3; j < header.size(); ++j) {
        weft::Column c;
        c.name = header[j];
        data.regressors.push_back(c);
        x_names.push_back(header[j]);
    }
    auto put = [](weft::Column& c, const std::string& cell) {
        if (cell.empty()) {
            c.values.push_back(0.0);
            c.missing.resize(c.values.size(), 0);
            c.missing.back() = 1;
        } else {
            c.values.push_back(std::stod(cell));
            if (!c.missing.empty()) c.missing.push_back(0);
        }
    };
    while (std::getline(in, line)) {
        if (line.empty()) continue;
        const auto cells = split_csv_line(line);
        if (cells.size() != header.size()) throw std::runtime_error(path + ": ragged row: " + line);
        data.units.text.push_back(cells[0]);
        put(data.periods, cells[1]);
        put(data.outcome, cells[2]);
        for (std::size_t j = 3; j < cells.size(); ++j) put(data.regressors[j - 3], cells[j]);
    }
    data.first_row_number = 2;
    // missing masks must have full length once any cell was missing
    auto pad = [](weft::Column& c) {
        if (!c.missing.empty()) c.missing.resize(c.values.size(), 0);
    };
    pad(data.periods);
    pad(data.outcome);
    for (auto& c : data.regressors) pad(c);
    return data;
}

void write_wald(Json& j, const weft::WaldResult& w) {
    j.open();
    j.field("chi2", w.chi2).field("q", w.chi2_df).field("p_chi2", w.chi2_p);
    j.field("F", w.f).field("df1", w.f_df1).field("df2", w.f_df2).field("p", w.f_p);
    j.close();
}

const char* const kFamilies[] = {"classical", "hc0", "hc1", "hc2", "hc3", "cluster",
                                 "cluster0", "cluster-period", "cluster-both", "dk",
                                 "dk=0", "dk=3", "cr2"};

void run_case(Json& j, const weft::PanelData& data, const std::vector<std::string>& x_names,
              const std::string& text) {
    std::map<std::string, std::string> errors;
    j.key(text).open();
    const weft::ModelSpec base = weft::parse_model_text(text);
    weft::Fit classical;
    bool have_classical = false;
    try {
        classical = weft::fit_model(data, base);
        have_classical = true;
    } catch (const weft::Error& e) {
        errors["fit"] = e.what();
    }
    if (have_classical) {
        j.key("coef").open();
        for (std::size_t k = 0; k < classical.equation.terms.size(); ++k)
            j.field(classical.equation.terms[k], classical.coef(static_cast<Eigen::Index>(k)));
        j.close();
    }
    std::map<std::string, weft::Fit> fits;
    for (const char* family : kFamilies) {
        try {
            // through the lean route where it applies (the route the C interface takes),
            // so that its standard errors meet the reference libraries too; the
            // classical fit above, which the row-based tests use, is the full one
            fits[family] = weft::fit_model_lean(data, weft::parse_model_text(text + " " + family));
        } catch (const weft::Error& e) {
            errors[std::string("se/") + family] = e.what();
        }
    }
    j.key("se").open();
    for (auto& [family, fit] : fits) {
        j.key(family).open();
        for (std::size_t k = 0; k < fit.equation.terms.size(); ++k)
            j.field(fit.equation.terms[k], fit.se(static_cast<Eigen::Index>(k)));
        j.close();
    }
    j.close();
    // per-term df where a family has its own (cr2: Satterthwaite)
    j.key("df").open();
    for (auto& [family, fit] : fits) {
        if (fit.covariance.term_df.empty()) continue;
        j.key(family).open();
        for (std::size_t k = 0; k < fit.equation.terms.size(); ++k)
            j.field(fit.equation.terms[k], fit.covariance.term_df[k]);
        j.close();
    }
    j.close();
    j.key("wald").open();
    for (auto& [family, fit] : fits) {
        try {
            // the regressors this fit estimates (within/fd drop time-invariant ones)
            std::vector<std::string> tested;
            for (const auto& x : x_names)
                if (fit.term_position(x)) tested.push_back(x);
            const auto w = weft::wald_test_terms(fit, tested);
            j.key(family);
            write_wald(j, w);
        } catch (const weft::Error& e) {
            errors["wald/" + family] = e.what();
        }
    }
    j.close();
    // the model's joint test of all regressors (fit.joint, issue 15): the same test as
    // "wald" above, reached through the fit itself; R's reference is its wald entry
    j.key("joint").open();
    for (auto& [family, fit] : fits) {
        if (!fit.joint) continue;
        if (!fit.joint->available) {
            errors["joint/" + family] = "singular (not available): " + fit.joint->reason;
            continue;
        }
        j.key(family).open();
        j.field("chi2", fit.joint->chi2).field("q", fit.joint->df1).field("p_chi2", fit.joint->chi2_p);
        j.field("F", fit.joint->f).field("df1", fit.joint->df1).field("df2", fit.joint->df2).field("p", fit.joint->p);
        j.close();
    }
    j.close();
    // whether the two-way covariance was clipped (a unit-free decision, issue 15)
    if (const auto both = fits.find("cluster-both"); both != fits.end())
        j.field("cluster_both_clipped", both->second.covariance.clipped ? 1.0 : 0.0);
    if (have_classical) {
        if (x_names.size() >= 2) {
            try {
                const auto k = static_cast<Eigen::Index>(classical.equation.n_terms());
                Eigen::MatrixXd r = Eigen::MatrixXd::Zero(1, k);
                r(0, static_cast<Eigen::Index>(*classical.term_position(x_names[0]))) = 1;
                r(0, static_cast<Eigen::Index>(*classical.term_position(x_names[1]))) = -1;
                const auto w = weft::wald_test(classical, r, Eigen::VectorXd::Constant(1, 0.25));
                j.key("restriction").open();
                j.field("chi2", w.chi2).field("F", w.f).field("df1", w.f_df1)
                    .field("df2", w.f_df2).field("p", w.f_p).field("p_chi2", w.chi2_p);
                j.close();
            } catch (const weft::Error& e) {
                errors["restriction"] = e.what();
            }
        }
        j.key("hetero").open();
        for (auto form : {weft::HeteroForm::koenker, weft::HeteroForm::bp,
                          weft::HeteroForm::white_special, weft::HeteroForm::white_full}) {
            try {
                const auto h = weft::hetero_test(classical, form);
                j.key(weft::to_word(form)).open();
                j.field("lm", h.lm).field("df", h.lm_df).field("p", h.lm_p);
                j.field("f", h.f).field("f_df1", h.f_df1).field("f_df2", h.f_df2)
                    .field("f_p", h.f_p);
                j.close();
            } catch (const weft::Error& e) {
                errors[std::string("hetero/") + weft::to_word(form)] = e.what();
            }
        }
        j.close();
        try {
            const auto s = weft::serial_test(classical);
            j.key("serial").open();
            j.field("slope", s.slope).field("se", s.se).field("t", s.t).field("df", s.df)
                .field("p", s.p).field("pairs", static_cast<double>(s.pairs))
                .field("units", static_cast<double>(s.units));
            if (s.level) {
                j.field("level_null", s.level->null_value).field("level_se", s.level->se)
                    .field("level_f", s.level->f).field("level_df1", s.level->f_df1)
                    .field("level_df2", s.level->f_df2).field("level_p", s.level->f_p)
                    .field("level_se_cluster0", s.level->se_cluster0);
            }
            j.close();
        } catch (const weft::Error& e) {
            errors["serial"] = e.what();
        }
        if (base.estimator == weft::Estimator::random) {
            try {
                const auto h = weft::hausman_test(data, base);
                j.key("hausman").open();
                j.field("stat", h.statistic).field("df", h.df).field("p", h.p)
                    .field("rank", static_cast<double>(h.rank));
                j.key("positive_definite").boolean(h.positive_definite);
                j.field("aux_chi2", h.robust.chi2).field("aux_q", h.robust.chi2_df)
                    .field("aux_p_chi2", h.robust.chi2_p).field("aux_f", h.robust.f)
                    .field("aux_df1", h.robust.f_df1).field("aux_df2", h.robust.f_df2)
                    .field("aux_p", h.robust.f_p)
                    .field("aux_classical_chi2", h.auxiliary_classical.chi2);
                j.close();
            } catch (const weft::Error& e) {
                errors["hausman"] = e.what();
            }
        }
        if (base.estimator == weft::Estimator::within) {
            try {
                const auto ef = weft::effects_test(data, base);
                j.key("effects").open();
                j.field("f", ef.f).field("df1", ef.df1).field("df2", ef.df2).field("p", ef.p);
                j.close();
            } catch (const weft::Error& e) {
                errors["effects"] = e.what();
            }
        }
    }
    j.key("errors").open();
    for (auto& [k, v] : errors) j.key(k).text(v);
    j.close();
    j.close();
}

}  // namespace

int main(int argc, char** argv) {
    if (argc != 4) {
        std::cerr << "usage: weft_oracle_cli panel.csv cases.txt out.json\n";
        return 2;
    }
    try {
        std::vector<std::string> x_names;
        const weft::PanelData data = read_panel(argv[1], x_names);
        std::ifstream cases(argv[2]);
        if (!cases) throw std::runtime_error(std::string("cannot open ") + argv[2]);
        Json j;
        j.open();
        std::string line;
        while (std::getline(cases, line)) {
            if (!line.empty() && line.back() == '\r') line.pop_back();
            if (line.empty()) continue;
            run_case(j, data, x_names, line);
        }
        j.close();
        std::ofstream out(argv[3]);
        out << j.str() << "\n";
        if (!out) throw std::runtime_error(std::string("cannot write ") + argv[3]);
    } catch (const std::exception& e) {
        std::cerr << "weft_oracle_cli: " << e.what() << "\n";
        return 1;
    }
    return 0;
}
