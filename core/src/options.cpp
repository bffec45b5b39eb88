// Model text parsing (FUNCTIONS.md "The model text").
#include "weft/options.hpp"

#include <cctype>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <vector>

#include "weft/error.hpp"

namespace weft {

namespace {

const char* const kAcceptedWords =
    "pooled, fd, within, random, between; classical, hc0, hc1, hc2, hc3, cluster, "
    "cluster0, cluster-period, cluster-both, dk, dk=L, cr2; periods; level=0.95; no-intercept; weights=NAME";

std::string lower(std::string_view s) {
    std::string out(s);
    for (char& ch : out) ch = static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
    return out;
}

[[noreturn]] void unknown_word(const std::string& word) {
    throw Error("model: unknown word \"" + word + "\"; accepted words are: " + kAcceptedWords);
}

[[noreturn]] void conflict(const std::string& first, const std::string& second) {
    throw Error("model: \"" + first + "\" and \"" + second +
                "\" conflict (choose one of each group); accepted words are: " + kAcceptedWords);
}

bool parse_estimator(const std::string& w, Estimator& out) {
    if (w == "pooled") out = Estimator::pooled;
    else if (w == "fd") out = Estimator::fd;
    else if (w == "within") out = Estimator::within;
    else if (w == "random") out = Estimator::random;
    else if (w == "between") out = Estimator::between;
    else return false;
    return true;
}

bool parse_covariance(const std::string& w, Covariance& out) {
    if (w == "classical") out = Covariance::classical;
    else if (w == "hc0") out = Covariance::hc0;
    else if (w == "hc1") out = Covariance::hc1;
    else if (w == "hc2") out = Covariance::hc2;
    else if (w == "hc3") out = Covariance::hc3;
    else if (w == "cluster") out = Covariance::cluster;
    else if (w == "cluster0") out = Covariance::cluster0;
    else if (w == "cluster-period") out = Covariance::cluster_period;
    else if (w == "cluster-both") out = Covariance::cluster_both;
    else if (w == "dk") out = Covariance::dk;
    else if (w == "cr2") out = Covariance::cr2;
    else return false;
    return true;
}

}  // namespace

const char* to_word(Estimator e) {
    switch (e) {
        case Estimator::pooled: return "pooled";
        case Estimator::fd: return "fd";
        case Estimator::within: return "within";
        case Estimator::between: return "between";
        case Estimator::random: return "random";
    }
    return "pooled";
}

const char* to_word(Covariance c) {
    switch (c) {
        case Covariance::classical: return "classical";
        case Covariance::hc0: return "hc0";
        case Covariance::hc1: return "hc1";
        case Covariance::hc2: return "hc2";
        case Covariance::hc3: return "hc3";
        case Covariance::cluster: return "cluster";
        case Covariance::cluster0: return "cluster0";
        case Covariance::cluster_period: return "cluster-period";
        case Covariance::cluster_both: return "cluster-both";
        case Covariance::dk: return "dk";
        case Covariance::cr2: return "cr2";
    }
    return "classical";
}

ModelSpec parse_model_text(std::string_view text) {
    ModelSpec spec;
    std::vector<std::string> words;
    std::string current;
    for (char ch : text) {
        if (ch == ',' || ch == ';' || std::isspace(static_cast<unsigned char>(ch))) {
            if (!current.empty()) words.push_back(current);
            current.clear();
        } else {
            current.push_back(ch);
        }
    }
    if (!current.empty()) words.push_back(current);

    std::string estimator_word, covariance_word, level_word, dk_word, weights_word;
    for (const std::string& original : words) {
        const std::string w = lower(original);
        Estimator e = Estimator::pooled;
        Covariance c = Covariance::classical;
        if (parse_estimator(w, e)) {
            if (!estimator_word.empty() && estimator_word != w) conflict(estimator_word, original);
            estimator_word = w;
            spec.estimator = e;
        } else if (parse_covariance(w, c) || w.rfind("dk=", 0) == 0) {
            int lag = -1;
            if (w.rfind("dk=", 0) == 0) {
                const std::string digits = w.substr(3);
                bool ok = !digits.empty() && digits.size() <= 6;
                for (char d : digits) ok = ok && std::isdigit(static_cast<unsigned char>(d));
                if (!ok)
                    throw Error("model: \"" + original +
                                "\" needs a whole number of lags >= 0 after dk=, e.g. dk=2");
                lag = std::atoi(digits.c_str());
                c = Covariance::dk;
            }
            if (!covariance_word.empty() && covariance_word != w) conflict(covariance_word, original);
            covariance_word = w;
            spec.covariance = c;
            spec.dk_lag = lag;
        } else if (w == "periods") {
            spec.period_effects = true;
        } else if (w == "no-intercept") {
            spec.intercept = false;
        } else if (w.rfind("weights=", 0) == 0) {
            const std::string name = original.substr(8);  // the column's name keeps its case
            if (name.empty())
                throw Error("model: \"" + original +
                            "\" needs the header of the regressor column that holds the weights, e.g. weights=population");
            if (!weights_word.empty() && weights_word != original) conflict(weights_word, original);
            weights_word = original;
            spec.weights = name;
        } else if (w.rfind("level=", 0) == 0) {
            const std::string number = w.substr(6);
            char* end = nullptr;
            const double level = number.empty() ? 0.0 : std::strtod(number.c_str(), &end);
            if (number.empty() || end == nullptr || *end != '\0' || !std::isfinite(level) ||
                level <= 0.0 || level >= 1.0)
                throw Error("model: \"" + original +
                            "\" needs a confidence level between 0 and 1, e.g. level=0.90");
            if (!level_word.empty() && level_word != w) conflict(level_word, original);
            level_word = w;
            spec.level = level;
        } else {
            unknown_word(original);
        }
    }
    return spec;
}

std::string describe(const ModelSpec& spec) {
    std::string out = to_word(spec.estimator);
    out += ' ';
    out += to_word(spec.covariance);
    if (spec.covariance == Covariance::dk && spec.dk_lag >= 0) out += "=" + std::to_string(spec.dk_lag);
    if (spec.period_effects) out += " periods";
    if (!spec.intercept) out += " no-intercept";
    char buffer[40];
    std::snprintf(buffer, sizeof buffer, "%.17g", spec.level);
    // shortest text that reads back to the same double
    for (int digits = 1; digits <= 17; ++digits) {
        char trial[40];
        std::snprintf(trial, sizeof trial, "%.*g", digits, spec.level);
        if (std::strtod(trial, nullptr) == spec.level) {
            std::snprintf(buffer, sizeof buffer, "%s", trial);
            break;
        }
    }
    out += " level=";
    out += buffer;
    if (!spec.weights.empty()) out += " weights=" + spec.weights;
    return out;
}

}  // namespace weft
