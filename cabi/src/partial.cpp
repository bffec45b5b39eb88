// partial.cpp -- the fit over partitions (weft_partial_*): pass-1 sums, pass-2 scores,
// their bytes, merging, and the finished model (core: weft/merge.hpp).
#include "boundary.hpp"
#include "convert.hpp"
#include "handles.hpp"

#include <weft/merge.hpp>
#include <weft/options.hpp>

#include <memory>
#include <optional>
#include <string>
#include <vector>

struct weft_partial {
    int kind = WEFT_PARTIAL_SUMS;
    std::optional<weft::PartialSums> sums;
    std::optional<weft::PartialScores> scores;
};

using namespace weft_cabi;

namespace {

void require_kind(const weft_partial* partial, int kind, const char* fn, const char* argument) {
    require(partial, fn, argument);
    if (partial->kind != kind)
        fail(WEFT_EINVAL, std::string(fn) + ": " + argument + " holds " +
                              (partial->kind == WEFT_PARTIAL_SUMS ? "pass-1 sums" : "pass-2 scores") +
                              " where " + (kind == WEFT_PARTIAL_SUMS ? "pass-1 sums" : "pass-2 scores") +
                              " are needed");
}

}  // namespace

extern "C" {

int weft_partial_sums(weft_partial** out, const weft_panel* panel, const char* model_text, const double* grid,
                      size_t n_grid) {
    return guarded(WEFT_EMODEL, [&] {
        const char* fn = "weft_partial_sums";
        require(out, fn, "out");
        *out = nullptr;
        require(panel, fn, "panel");
        require(grid, fn, "grid");
        require_model_columns(panel, fn);
        const weft::ModelSpec spec = weft::parse_model_text(model_text == nullptr ? "" : model_text);
        const std::string refusal = weft::partition_refusal(spec);
        if (!refusal.empty()) fail(WEFT_EMODEL, refusal);
        return guarded(WEFT_EDATA, [&] {
            auto partial = std::make_unique<weft_partial>();
            partial->sums = weft::accumulate_sums(*panel->data, spec, std::vector<double>(grid, grid + n_grid));
            *out = partial.release();
            return WEFT_OK;
        });
    });
}

int weft_partial_scores(weft_partial** out, const weft_panel* panel, const weft_partial* sums) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_partial_scores";
        require(out, fn, "out");
        *out = nullptr;
        require(panel, fn, "panel");
        require_kind(sums, WEFT_PARTIAL_SUMS, fn, "sums");
        require_model_columns(panel, fn);
        auto partial = std::make_unique<weft_partial>();
        partial->kind = WEFT_PARTIAL_SCORES;
        partial->scores = weft::accumulate_scores(*panel->data, *sums->sums);
        *out = partial.release();
        return WEFT_OK;
    });
}

int weft_partial_merge(weft_partial* into, const weft_partial* other) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_partial_merge";
        require(into, fn, "into");
        require_kind(other, into->kind, fn, "other");
        if (into->kind == WEFT_PARTIAL_SUMS) {
            weft::PartialSums merged = *into->sums;   // into is unchanged on failure
            weft::merge_sums(merged, *other->sums);
            into->sums = std::move(merged);
        } else {
            weft::PartialScores merged = *into->scores;
            weft::merge_scores(merged, *other->scores);
            into->scores = std::move(merged);
        }
        return WEFT_OK;
    });
}

int weft_partial_bytes(const weft_partial* partial, unsigned char* buf, size_t capacity, size_t* needed) {
    return guarded(WEFT_EINVAL, [&] {
        const char* fn = "weft_partial_bytes";
        require(partial, fn, "partial");
        const std::vector<std::uint8_t> bytes =
            partial->kind == WEFT_PARTIAL_SUMS ? weft::to_bytes(*partial->sums) : weft::to_bytes(*partial->scores);
        if (buffer_ready(fn, buf, capacity, needed, bytes.size()))
            std::copy(bytes.begin(), bytes.end(), buf);
        return WEFT_OK;
    });
}

int weft_partial_from_bytes(weft_partial** out, const unsigned char* bytes, size_t size) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_partial_from_bytes";
        require(out, fn, "out");
        *out = nullptr;
        require(bytes, fn, "bytes");
        auto partial = std::make_unique<weft_partial>();
        partial->kind = weft::partial_kind(bytes, size);
        if (partial->kind == WEFT_PARTIAL_SUMS)
            partial->sums = weft::sums_from_bytes(bytes, size);
        else
            partial->scores = weft::scores_from_bytes(bytes, size);
        *out = partial.release();
        return WEFT_OK;
    });
}

int weft_partial_kind(const weft_partial* partial, int* kind) {
    return guarded(WEFT_EINVAL, [&] {
        require(partial, "weft_partial_kind", "partial");
        require(kind, "weft_partial_kind", "kind");
        *kind = partial->kind;
        return WEFT_OK;
    });
}

int weft_partial_finish(weft_model** out, const weft_partial* sums, const weft_partial* scores) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_partial_finish";
        require(out, fn, "out");
        *out = nullptr;
        require_kind(sums, WEFT_PARTIAL_SUMS, fn, "sums");
        require_kind(scores, WEFT_PARTIAL_SCORES, fn, "scores");
        weft_model* model = package_fit(weft::finish_fit(*sums->sums, *scores->scores));
        model->partitioned = true;
        *out = model;
        return WEFT_OK;
    });
}

int weft_partial_series(const weft_panel* panel, const weft_partial* sums, const weft_partial* scores,
                        double* residuals, double* fitted, unsigned char* unused, size_t rows) {
    return guarded(WEFT_EDATA, [&] {
        const char* fn = "weft_partial_series";
        require(panel, fn, "panel");
        require_kind(sums, WEFT_PARTIAL_SUMS, fn, "sums");
        require_kind(scores, WEFT_PARTIAL_SCORES, fn, "scores");
        require_model_columns(panel, fn);
        const std::size_t n_rows = panel->data->outcome.size();
        if (rows != n_rows)
            fail(WEFT_EBUFFER, std::string(fn) + ": rows is " + std::to_string(rows) + " but the panel has " +
                                   std::to_string(n_rows) + " rows; pass arrays of the panel's row count");
        const weft::PartitionSeries series = weft::partition_series(*panel->data, *sums->sums, *scores->scores);
        if (residuals != nullptr) write_series(series.residuals, residuals, unused);
        if (fitted != nullptr) write_series(series.fitted, fitted, unused);
        return WEFT_OK;
    });
}

void weft_partial_free(weft_partial* partial) { delete partial; }

}  // extern "C"
