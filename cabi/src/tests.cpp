// tests.cpp -- the specification tests: Wald, heteroskedasticity, serial correlation,
// Hausman and unit effects. The statistics live in core; this file checks arguments
// and copies results.
#include "boundary.hpp"
#include "convert.hpp"
#include "handles.hpp"

#include <cctype>
#include <string>
#include <vector>

using namespace weft_cabi;

namespace {

[[noreturn]] void not_yet(const char* fn) {
    fail(WEFT_EINTERNAL, std::string(fn) + ": this test is not available in this build of weft yet");
}

std::string lower(std::string s) {
    for (char& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
    return s;
}

std::string trim(const std::string& s) {
    const auto first = s.find_first_not_of(" \t\r\n");
    if (first == std::string::npos) return "";
    const auto last = s.find_last_not_of(" \t\r\n");
    return s.substr(first, last - first + 1);
}

}  // namespace

extern "C" {

int weft_hetero_form_parse(const char* word, int* form) {
    return guarded(WEFT_EMODEL, [&] {
        const char* fn = "weft_hetero_form_parse";
        require(form, fn, "form");
        const std::string w = lower(trim(word == nullptr ? "" : word));
        if (w.empty() || w == "koenker") *form = WEFT_HETERO_KOENKER;
        else if (w == "bp") *form = WEFT_HETERO_BP;
        else if (w == "white-special") *form = WEFT_HETERO_WHITE_SPECIAL;
        else if (w == "white-full") *form = WEFT_HETERO_WHITE_FULL;
        else
            fail(WEFT_EMODEL, "heteroskedasticity test form \"" + std::string(word) +
                                  "\" is not known; use one of: koenker, bp, white-special, white-full");
        return WEFT_OK;
    });
}

int weft_test_joint(const weft_model* model, const char* const* terms, size_t n_terms,
                    weft_wald_result* out) {
    return guarded(WEFT_ECOMPUTE, [&]() -> int {
        const char* fn = "weft_test_joint";
        require_model(model, fn);
        require(terms, fn, "terms");
        require(out, fn, "out");
        (void)n_terms;
        not_yet(fn);
    });
}

int weft_test_joint_list(const weft_model* model, const char* term_list, weft_wald_result* out) {
    return guarded(WEFT_ECOMPUTE, [&]() -> int {
        const char* fn = "weft_test_joint_list";
        require_model(model, fn);
        require(term_list, fn, "term_list");
        require(out, fn, "out");
        std::vector<std::string> names;
        std::string rest = term_list;
        std::size_t start = 0;
        while (start <= rest.size()) {
            const std::size_t comma = rest.find(',', start);
            const std::string name =
                trim(rest.substr(start, comma == std::string::npos ? std::string::npos : comma - start));
            if (!name.empty()) names.push_back(name);
            if (comma == std::string::npos) break;
            start = comma + 1;
        }
        if (names.empty())
            fail(WEFT_EINVAL, std::string(fn) + ": the term list \"" + rest +
                                  "\" names no term; give names separated by commas, e.g. \"value, capital\"");
        std::vector<const char*> pointers;
        for (const std::string& n : names) pointers.push_back(n.c_str());
        const int status = weft_test_joint(model, pointers.data(), pointers.size(), out);
        return status;
    });
}

int weft_test_hetero(const weft_model* model, int form, weft_hetero_result* out) {
    return guarded(WEFT_ECOMPUTE, [&]() -> int {
        const char* fn = "weft_test_hetero";
        require_model(model, fn);
        require(out, fn, "out");
        (void)form;
        not_yet(fn);
    });
}

int weft_test_serial(const weft_model* model, weft_serial_result* out) {
    return guarded(WEFT_ECOMPUTE, [&]() -> int {
        const char* fn = "weft_test_serial";
        require_model(model, fn);
        require(out, fn, "out");
        not_yet(fn);
    });
}

int weft_test_hausman(const weft_panel* panel, const weft_options* options, weft_hausman_result* out) {
    return guarded(WEFT_ECOMPUTE, [&]() -> int {
        const char* fn = "weft_test_hausman";
        require(panel, fn, "panel");
        require(out, fn, "out");
        (void)options;
        not_yet(fn);
    });
}

int weft_test_effects(const weft_panel* panel, const weft_options* options, weft_effects_result* out) {
    return guarded(WEFT_ECOMPUTE, [&]() -> int {
        const char* fn = "weft_test_effects";
        require(panel, fn, "panel");
        require(out, fn, "out");
        (void)options;
        not_yet(fn);
    });
}

}  // extern "C"
