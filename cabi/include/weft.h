/*
 * weft.h - the stable C interface of weft, panel-data estimation.
 *
 * This header is the specification of the C interface: every function below says
 * what it does, who owns what, how long a borrowed pointer lives and what NULL
 * means. It is plain C99 and compiles alone. cabi/ABI.md says what stays stable
 * across versions.
 *
 * Conventions used by every function (read these once):
 *
 * Status.  Functions return an int status: WEFT_OK (0) on success, a negative
 *   WEFT_E* code on failure. Codes are append-only: a code never changes its number
 *   or meaning. On failure the thread's last-error text (weft_last_error) says what
 *   is wrong and how to fix it; it always begins with "weft: ", so a host can show it
 *   as it is (e.g. in a spreadsheet cell). On failure, out-parameters are left as the
 *   function documents (handles: set to NULL; numbers: NaN where stated; buffers:
 *   untouched).
 *
 * Handles.  weft_panel (the caller's columns) and weft_model (one fitted model) are
 *   opaque. The caller owns what a *_new function returns through its first argument
 *   and releases it with the matching *_free; *_free(NULL) does nothing. A model does
 *   not borrow its panel handle: the panel may be freed right after weft_model_new
 *   returns. It does keep reading every array the panel borrowed (below).
 *
 * Borrowed strings.  A `const char *` handed out by a getter belongs to the handle
 *   it came from and stays valid, unchanged, until that handle is freed. Strings are
 *   UTF-8 and NUL-terminated. Never free them.
 *
 * Input arrays.  Every array passed in is only read. Functions named *_set_* or
 *   *_add_* read it during the call only and copy what they keep. Functions named
 *   weft_panel_borrow_* keep the caller's pointer instead: that array must stay valid
 *   and unchanged until weft_panel_free() of the panel AND weft_model_free() of every
 *   model made from it (a model may read its columns again, e.g. a test that refits),
 *   whichever comes last. A numeric column is `const double *values` with
 *   `const unsigned char *missing`: missing[i] != 0 marks row i as missing (a blank
 *   or text cell in a spreadsheet); missing == NULL means no row is missing. A value
 *   that is NaN or infinite and not marked missing is an error (WEFT_EDATA) that
 *   names the row: weft never treats a stray NaN as a blank silently.
 *
 * Buffers.  A getter that fills a caller buffer takes (buf, capacity, needed):
 *   capacity is the number of elements buf can hold; *needed (when needed is not
 *   NULL) always receives the number of elements of the whole result. A call with
 *   buf == NULL and capacity == 0 is a size query and returns WEFT_OK; buf == NULL
 *   with a nonzero capacity is WEFT_EINVAL. If capacity is smaller than the result,
 *   nothing is written and WEFT_EBUFFER is returned (the message gives both sizes).
 *
 * Rows.  Row i (0-based) of every column is input row i. Results aligned to rows
 *   (residuals, fitted values, transforms) have one element per input row, in input
 *   order; a row with no result holds NaN and, in the accompanying mask, 1.
 *   Messages name rows as first_row + i (see weft_panel_new), so a host can make
 *   them match its own row numbers.
 *
 * Threads.  Every function may be called from any thread. Different handles may be
 *   used by different threads at the same time; one handle must not be used by two
 *   threads at once. The last-error text is per thread.
 *
 * Exceptions.  No C++ exception ever leaves a weft function; misuse (a NULL handle,
 *   a bad enum value, a too-small buffer) is a status with a message, never a crash.
 */
#ifndef WEFT_H
#define WEFT_H

#include <stddef.h>

#ifdef __cplusplus
extern "C" {
#endif

/* Symbol export. Only weft_* symbols are visible in the shared library. */
#if defined(_WIN32) || defined(__CYGWIN__)
#  if defined(WEFT_BUILDING_LIBRARY)
#    define WEFT_API __declspec(dllexport)
#  else
#    define WEFT_API __declspec(dllimport)
#  endif
#elif defined(__GNUC__) && __GNUC__ >= 4
#  define WEFT_API __attribute__((visibility("default")))
#else
#  define WEFT_API
#endif

/* ------------------------------------------------------------------------------
 * Versions
 * --------------------------------------------------------------------------- */

/** Version of this header. WEFT_VERSION_NUMBER = major * 10000 + minor * 100 +
 *  patch. Compare with weft_version_number() to detect a header/library mismatch. */
#define WEFT_VERSION_MAJOR 0
#define WEFT_VERSION_MINOR 3
#define WEFT_VERSION_PATCH 0
#define WEFT_VERSION_NUMBER 300
#define WEFT_VERSION "0.3.0"

/** The library's version number, same encoding as WEFT_VERSION_NUMBER. Never
 *  fails. */
WEFT_API int weft_version_number(void);

/** The library's version as text, e.g. "0.1.0". A static string: never NULL,
 *  never freed, valid for the life of the process. */
WEFT_API const char *weft_version_text(void);

/* ------------------------------------------------------------------------------
 * Status codes and errors
 * --------------------------------------------------------------------------- */

/** Status codes. Append-only: new codes get new numbers below the last one. */
enum weft_status {
    WEFT_OK = 0,          /**< success */
    WEFT_EINVAL = -1,     /**< invalid argument: NULL where a pointer is needed, an
                               unknown enum value, a bad options size/version, a
                               column set twice, a panel without a needed column */
    WEFT_ENOMEM = -2,     /**< out of memory */
    WEFT_EBUFFER = -3,    /**< the caller's buffer is too small (see *needed) */
    WEFT_EDATA = -4,      /**< the data were rejected: non-finite value not marked
                               missing, repeated unit-period pair, too few rows */
    WEFT_EMODEL = -5,     /**< the model text or options were rejected: unknown or
                               conflicting word, bad level, bad lag */
    WEFT_ERANGE = -6,     /**< an index past the end, or a term name that the
                               model does not have */
    WEFT_ECOMPUTE = -7,   /**< the data are valid but the requested quantity cannot
                               be computed from them (e.g. cluster standard errors
                               with one cluster, a test that needs more periods) */
    WEFT_EINTERNAL = -8   /**< an unexpected failure inside weft (a bug: please
                               report the message) */
};

/** The message of the most recent failed weft call on this thread. Never NULL;
 *  always begins with "weft: ". Before any failure it is "weft: no error". A
 *  successful call does not change it (as with errno: read it right after the call
 *  that failed). The pointer is valid until the next weft call on this thread;
 *  copy the text to keep it. */
WEFT_API const char *weft_last_error(void);

/** Reset this thread's last-error text to "weft: no error". Never fails. */
WEFT_API void weft_clear_error(void);

/** A short fixed description of a status code, e.g. "buffer too small" for
 *  WEFT_EBUFFER; "unknown status" for a number that is not a code. A static
 *  string: never NULL, never freed. Never fails and never touches the last-error
 *  text. */
WEFT_API const char *weft_status_text(int status);

/* ------------------------------------------------------------------------------
 * Model options
 * --------------------------------------------------------------------------- */

/** Estimators (append-only numbering). See CONVENTIONS.md for the definitions. */
enum weft_estimator {
    WEFT_POOLED = 0,      /**< pooled OLS */
    WEFT_FD = 1,          /**< first differences between adjacent periods */
    WEFT_WITHIN = 2,      /**< unit fixed effects (demeaned) */
    WEFT_RANDOM = 3,      /**< random effects, Swamy-Arora */
    WEFT_BETWEEN = 4      /**< OLS on unit means */
};

/** Standard errors (append-only numbering). */
enum weft_se {
    WEFT_SE_CLASSICAL = 0,
    WEFT_SE_HC0 = 1,
    WEFT_SE_HC1 = 2,
    WEFT_SE_HC2 = 3,
    WEFT_SE_HC3 = 4,
    WEFT_SE_CLUSTER = 5,         /**< cluster by unit, CR1 */
    WEFT_SE_CLUSTER0 = 6,        /**< cluster by unit, CR0 */
    WEFT_SE_CLUSTER_PERIOD = 7,  /**< cluster by period, CR1 */
    WEFT_SE_CLUSTER_BOTH = 8,    /**< two-way clustering by unit and period */
    WEFT_SE_DK = 9,              /**< Driscoll-Kraay, Bartlett lag dk_lag */
    WEFT_SE_CR2 = 10             /**< cluster by unit, bias-reduced CR2 (Bell-McCaffrey
                                      2002): t, p and intervals of each term on its own
                                      Satterthwaite df (weft_model_term_df); joint tests
                                      by the HTZ approximation (since 0.3.0); with
                                      observation weights, the CR2 of the sqrt(w)-scaled
                                      equation (precision weights) */
};

#define WEFT_OPTIONS_VERSION 1

/** Everything that the model text can say, as a struct. Always start from
 *  WEFT_OPTIONS_INIT (or weft_options_init) so that `size` and `version` say which
 *  layout the caller was compiled with; fields added in later versions go at the
 *  end and take their defaults for older callers. */
typedef struct weft_options {
    size_t size;            /**< sizeof(weft_options) as the caller compiled it */
    unsigned int version;   /**< WEFT_OPTIONS_VERSION as the caller compiled it */
    int estimator;          /**< enum weft_estimator; default WEFT_POOLED */
    int se;                 /**< enum weft_se; default WEFT_SE_CLASSICAL */
    int dk_lag;             /**< Bartlett lag for WEFT_SE_DK; -1 (default) means
                                 floor(T^(1/4)) with T the number of periods */
    int period_effects;     /**< nonzero: add period indicators; default 0 */
    int intercept;          /**< nonzero (default): include the intercept */
    double level;           /**< confidence level of intervals, in (0, 1);
                                 default 0.95 */
} weft_options;

/** Default options: pooled, classical, dk_lag -1, no period indicators, intercept,
 *  level 0.95. Use as `weft_options o = WEFT_OPTIONS_INIT;`. */
#define WEFT_OPTIONS_INIT \
    { sizeof(weft_options), WEFT_OPTIONS_VERSION, WEFT_POOLED, WEFT_SE_CLASSICAL, -1, 0, 1, 0.95 }

/** Fill *options with the defaults (same as WEFT_OPTIONS_INIT), for hosts that
 *  cannot use the macro. Returns WEFT_EINVAL if options is NULL. */
WEFT_API int weft_options_init(weft_options *options);

/** Parse a model text (FUNCTIONS.md: words such as "fd periods cluster",
 *  "within dk=2 level=0.9 no-intercept", separated by spaces or commas, any order)
 *  into *options. *options is first reset to the defaults, then the words are
 *  applied, so a group the text does not mention has its default whatever *options
 *  held before. NULL or an empty text gives the defaults.
 *  Errors: WEFT_EINVAL if options is NULL; WEFT_EMODEL for an unknown or conflicting
 *  word, with a message naming the word and listing the accepted words. The word
 *  weights=NAME (0.3.0) names a column, which the struct cannot hold: it is
 *  WEFT_EMODEL here (so that no host drops it without noticing); pass such a text to
 *  weft_model_new_text, or set the weights with weft_panel_set_weights. On failure
 *  *options holds the defaults. */
WEFT_API int weft_options_parse(weft_options *options, const char *model_text);

/** The canonical model text of *options (every group spelled out in a fixed order,
 *  e.g. "fd cluster periods level=0.95"), as a NUL-terminated string in buf. Two
 *  texts or structs meaning the same model give the same string, so a host can use
 *  it as a cache key; weft_options_parse of it gives *options back. Buffer
 *  convention as at the top, counting chars including the terminating NUL.
 *  Errors: WEFT_EINVAL (options NULL, or its size/version/enum fields invalid),
 *  WEFT_EMODEL (dk_lag or level out of range), WEFT_EBUFFER. */
WEFT_API int weft_options_text(const weft_options *options, char *buf, size_t capacity,
                               size_t *needed);

/* ------------------------------------------------------------------------------
 * Panel: the caller's columns
 * --------------------------------------------------------------------------- */

/** An opaque panel: n_rows rows of unit ids, periods, and optionally an outcome and
 *  regressors, all copied from the caller. */
typedef struct weft_panel weft_panel;

/** Create an empty panel of n_rows rows, then set its columns with the
 *  weft_panel_set_* / weft_panel_add_regressor functions. first_row is the number
 *  that messages use for row 0 (e.g. 2 when a spreadsheet range starts at row 2
 *  under a header; 1 if unsure): a message then says "row 12" for the sheet's row 12.
 *  Which columns are needed depends on the use: transforms and weft_panel_structure
 *  need units and periods (weft_panel_demean needs only units); a model needs units,
 *  periods, an outcome and at least one regressor unless the intercept is kept.
 *  The panel is checked (repeated unit-period pairs, non-finite values) when it is
 *  used, so that weft_panel_structure can report problems instead of refusing.
 *  On success *out receives a new panel the caller must free with weft_panel_free.
 *  Errors: WEFT_EINVAL if out is NULL (then nothing is written) or n_rows is 0
 *  (*out = NULL); WEFT_ENOMEM. */
WEFT_API int weft_panel_new(weft_panel **out, size_t n_rows, size_t first_row);

/** Release a panel. NULL does nothing. Models made from it stay valid. */
WEFT_API void weft_panel_free(weft_panel *panel);

/** Number of rows the panel was created with, into *n_rows.
 *  Errors: WEFT_EINVAL if panel or n_rows is NULL. */
WEFT_API int weft_panel_row_count(const weft_panel *panel, size_t *n_rows);

/** Set the unit ids from text: ids[i] is the UTF-8 id of row i. A row is missing
 *  when missing[i] != 0, or ids[i] is NULL, or ids[i] is "" (a blank cell). Ids are
 *  compared as exact bytes ("7" and "7.0" are different units). ids (an array of
 *  n_rows pointers) is copied.
 *  Errors: WEFT_EINVAL if panel or ids is NULL, or units were already set. */
WEFT_API int weft_panel_set_units_text(weft_panel *panel, const char *const *ids,
                                       const unsigned char *missing);

/** Set the unit ids from numbers: ids[i] is the id of row i (n_rows values, copied);
 *  missing as described at the top. Ids are compared as numbers.
 *  Errors: WEFT_EINVAL if panel or ids is NULL, or units were already set. */
WEFT_API int weft_panel_set_units_number(weft_panel *panel, const double *ids,
                                         const unsigned char *missing);

/** Set the periods: periods[i] is the period of row i (a year, a quarter index, a
 *  date serial number), n_rows values, copied. Periods are placed on the panel's own
 *  grid of distinct values (CONVENTIONS.md).
 *  Errors: WEFT_EINVAL if panel or periods is NULL, or periods were already set. */
WEFT_API int weft_panel_set_periods(weft_panel *panel, const double *periods,
                                    const unsigned char *missing);

/** Set the outcome column (n_rows values, copied). name may be NULL (then "y");
 *  it is used in messages only.
 *  Errors: WEFT_EINVAL if panel or values is NULL, or the outcome was already set. */
WEFT_API int weft_panel_set_outcome(weft_panel *panel, const char *name,
                                    const double *values, const unsigned char *missing);

/** Append one regressor column (n_rows values, copied). name is its term name in
 *  every result; NULL or "" gives "x<k>" with k its 1-based position among the
 *  regressors. Names must be distinct and must not be "intercept" (checked when a
 *  model is fitted: WEFT_EDATA naming the term).
 *  Errors: WEFT_EINVAL if panel or values is NULL. */
WEFT_API int weft_panel_add_regressor(weft_panel *panel, const char *name,
                                      const double *values, const unsigned char *missing);

/** Borrowing instead of copying, for large data (since 0.2.0): the same as
 *  weft_panel_set_periods, weft_panel_set_outcome and weft_panel_add_regressor,
 *  except that the panel reads the caller's arrays (values and, when not NULL,
 *  missing; n_rows entries each) in place instead of copying them. The caller keeps
 *  both arrays valid and unchanged until weft_panel_free() of this panel and
 *  weft_model_free() of every model made from it: a model may read them again (a
 *  test that refits). Results never depend on whether a column was borrowed.
 *  Errors: as the copying function of the same column. */
WEFT_API int weft_panel_borrow_periods(weft_panel *panel, const double *periods,
                                       const unsigned char *missing);
WEFT_API int weft_panel_borrow_outcome(weft_panel *panel, const char *name,
                                       const double *values, const unsigned char *missing);
WEFT_API int weft_panel_borrow_regressor(weft_panel *panel, const char *name,
                                         const double *values, const unsigned char *missing);

/** Borrowing the unit ids (since 0.3.0), for large data: as
 *  weft_panel_set_units_number and weft_panel_set_units_text, except that the panel
 *  reads the caller's arrays in place, for as long as the borrowed columns above
 *  (until weft_panel_free() of this panel and weft_model_free() of every model made
 *  from it). Text ids come as one buffer of bytes, with no pointer per row: the id
 *  of row i is the n = offsets[i + 1] - offsets[i] bytes at bytes + offsets[i] (UTF-8,
 *  no NUL needed; offsets has n_rows + 1 entries that never decrease). A row is
 *  missing when missing[i] != 0 or its id is empty. Ids are compared as exact bytes.
 *  Errors: WEFT_EINVAL if panel, ids or offsets is NULL, or units were already set;
 *  WEFT_EDATA if the offsets decrease, or bytes is NULL while some id is not empty. */
WEFT_API int weft_panel_borrow_units_number(weft_panel *panel, const double *ids,
                                            const unsigned char *missing);
WEFT_API int weft_panel_borrow_units_text(weft_panel *panel, const char *bytes,
                                          const size_t *offsets, const unsigned char *missing);

/** Observation weights (since 0.3.0; CONVENTIONS "Observation weights"): one weight
 *  per row (n_rows values). Weighted least squares in every estimator but random;
 *  every standard-error family follows the weights (cr2: the CR2 of the equation whose
 *  rows are scaled by sqrt(w), i.e. precision weights; README "Few clusters"). A row
 *  whose missing entry is nonzero (a blank weight) is dropped and counted with the
 *  missing rows; a weight
 *  of 0 leaves the row out of the estimated equation and out of N (the summary says
 *  how many); a negative, NaN or infinite weight not marked missing is WEFT_EDATA
 *  naming the row when a model is fitted. name labels the column in messages (NULL
 *  or "" gives "weights"). The model word weights=NAME, which takes a regressor
 *  column as the weights instead, must then not be used (WEFT_EDATA if both are).
 *  weft_panel_set_weights copies values and missing. weft_panel_borrow_weights reads
 *  them in place: ownership stays with the caller, who keeps both arrays valid and
 *  unchanged until weft_panel_free() of this panel and weft_model_free() of every
 *  model made from it (as the other borrow functions).
 *  Errors: WEFT_EINVAL if panel or values is NULL, or the weights were already set. */
WEFT_API int weft_panel_set_weights(weft_panel *panel, const char *name,
                                    const double *values, const unsigned char *missing);
WEFT_API int weft_panel_borrow_weights(weft_panel *panel, const char *name,
                                       const double *values, const unsigned char *missing);

/* ------------------------------------------------------------------------------
 * Panel structure report (WEFT.PANEL)
 * --------------------------------------------------------------------------- */

/** The structure of a panel's unit and period columns. Counts rows that have both a
 *  unit and a period. This layout never changes (ABI.md). */
typedef struct weft_structure {
    size_t units;             /**< distinct units */
    size_t periods;           /**< distinct periods (the grid) */
    size_t rows;              /**< rows with a unit and a period */
    size_t rows_missing;      /**< rows without a unit or a period */
    int balanced;             /**< 1 if every unit has every period once */
    size_t min_periods;       /**< fewest periods of a unit */
    double median_periods;    /**< median periods per unit */
    size_t max_periods;       /**< most periods of a unit */
    size_t gaps;              /**< grid periods skipped inside units' spans */
    size_t duplicates;        /**< rows that repeat an earlier (unit, period) pair */
    size_t single_row_units;  /**< units with one row */
    size_t units_with_gaps;   /**< units that skip at least one grid period */
    size_t rows_input;        /**< all rows (n_rows) */
} weft_structure;

/** Describe the panel's structure into *out. Repeated pairs are counted, not an
 *  error. Errors: WEFT_EINVAL if panel or out is NULL or units or periods are not
 *  set; WEFT_EDATA for a non-finite period not marked missing; WEFT_EDATA when no
 *  row has both a unit and a period. */
WEFT_API int weft_panel_structure(const weft_panel *panel, weft_structure *out);

/** The period grid (sorted distinct period values of the rows that have both a
 *  unit and a period) into buf[0..periods-1]. Buffer convention as at the top.
 *  Errors: WEFT_EINVAL (NULL panel, units or periods not set), WEFT_EBUFFER,
 *  WEFT_EDATA as for weft_panel_structure. */
WEFT_API int weft_panel_period_grid(const weft_panel *panel, double *buf,
                                    size_t capacity, size_t *needed);

/* ------------------------------------------------------------------------------
 * Transforms (WEFT.DIFF, WEFT.LAG, WEFT.DEMEAN, WEFT.DUMMIES)
 *
 * Each takes one numeric column `values`/`missing` of n_rows elements (not a panel
 * column: any column the caller has) and writes n_rows results aligned to the input
 * rows into out (capacity elements) and out_missing (n_rows flags, 1 = no result;
 * may be NULL; out then holds NaN there). capacity must be at least n_rows
 * (WEFT_EBUFFER otherwise). The panel supplies the units (and periods); diff and
 * lag refuse repeated unit-period pairs (WEFT_EDATA names unit, period and rows).
 * --------------------------------------------------------------------------- */

/** Difference k grid steps apart within the unit: out[i] = v(t) - v(t - k steps)
 *  when that row exists in the same unit and its value is present, else no result
 *  (so k = 1 is the first difference and never crosses a gap; k < 0 differences
 *  against a later period). Errors: WEFT_EINVAL (NULL panel/values/out, units or
 *  periods not set, k = 0), WEFT_EBUFFER, WEFT_EDATA. */
WEFT_API int weft_panel_diff(const weft_panel *panel, const double *values,
                             const unsigned char *missing, int k, double *out,
                             unsigned char *out_missing, size_t capacity);

/** Value k grid periods earlier in the same unit (negative k: later); no result
 *  where that period is absent or its value missing. Errors as weft_panel_diff
 *  (k = 0 is WEFT_EINVAL). */
WEFT_API int weft_panel_lag(const weft_panel *panel, const double *values,
                            const unsigned char *missing, int k, double *out,
                            unsigned char *out_missing, size_t capacity);

/** Deviation from the unit's mean over the rows where the value is present. Needs
 *  only units (periods may be unset). Errors as weft_panel_diff, without k. */
WEFT_API int weft_panel_demean(const weft_panel *panel, const double *values,
                               const unsigned char *missing, double *out,
                               unsigned char *out_missing, size_t capacity);

/** The unit's mean over the rows where the value is present, on every such row
 *  (the quantity weft_panel_demean subtracts; between regresses on it). Needs only
 *  units. Errors as weft_panel_demean. */
WEFT_API int weft_panel_unit_means(const weft_panel *panel, const double *values,
                                   const unsigned char *missing, double *out,
                                   unsigned char *out_missing, size_t capacity);

/** Period indicator block, row-major: n_rows rows by C columns, one column per
 *  distinct period among the rows that have a period (units are not needed), sorted;
 *  with omit_first != 0 the first period's column is left out. Element [i * C + j]
 *  is 1 if row i is in period j, else 0; a row without a period holds NaN in every
 *  column. *needed = n_rows * C. Buffer convention as at the top.
 *  Errors: WEFT_EINVAL (NULL panel, periods not set), WEFT_EBUFFER, WEFT_EDATA. */
WEFT_API int weft_panel_dummies(const weft_panel *panel, int omit_first, double *buf,
                                size_t capacity, size_t *needed);

/** The period of each column of weft_panel_dummies (same omit_first), C values, for
 *  the header row. Buffer convention as at the top. Errors as weft_panel_dummies. */
WEFT_API int weft_panel_dummy_periods(const weft_panel *panel, int omit_first,
                                      double *buf, size_t capacity, size_t *needed);

/* ------------------------------------------------------------------------------
 * Model: one fitted model
 * --------------------------------------------------------------------------- */

/** An opaque fitted model: estimates, covariance, summary, residuals. */
typedef struct weft_model weft_model;

/** Fit the model described by *options (NULL: defaults) to the panel. All of the
 *  panel that the model needs is copied; the panel may be freed afterwards.
 *  Rows with a missing outcome, regressor, unit or period are dropped listwise and
 *  counted. On success *out receives a new model the caller must free with
 *  weft_model_free; on failure *out is NULL.
 *  Errors: WEFT_EINVAL (out or panel NULL, options size/version unknown, an
 *  estimator or se value that is not in its enum, outcome/units/periods not set);
 *  WEFT_EMODEL (dk_lag < -1, level outside (0, 1)); WEFT_EDATA (whatever the data
 *  do not allow: a repeated unit-period pair, a non-finite value not marked
 *  missing, a repeated term name, no usable rows, fewer rows than terms, fewer than
 *  2 clusters for cluster standard errors; the message says which); WEFT_ENOMEM. */
WEFT_API int weft_model_new(weft_model **out, const weft_panel *panel,
                            const weft_options *options);

/** weft_options_parse(model_text) followed by weft_model_new: the usual path for a
 *  host that receives the model as text. Errors: those of both. */
WEFT_API int weft_model_new_text(weft_model **out, const weft_panel *panel,
                                 const char *model_text);

/** Release a model. NULL does nothing. Every string borrowed from it dies. */
WEFT_API void weft_model_free(weft_model *model);

/** The options the model was fitted with (copied into *out, whose size field the
 *  caller sets first, e.g. from WEFT_OPTIONS_INIT; only that many bytes are written).
 *  Errors: WEFT_EINVAL if model or out is NULL or out->size is too small. */
WEFT_API int weft_model_options(const weft_model *model, weft_options *out);

/* --- coefficient table (WEFT.ESTIMATES) ------------------------------------- */

/** Columns of the coefficient table, in order. Fixed forever. */
enum weft_coefficient_column {
    WEFT_COEF_ESTIMATE = 0,
    WEFT_COEF_SE = 1,
    WEFT_COEF_T = 2,
    WEFT_COEF_P = 3,
    WEFT_COEF_CI_LOW = 4,
    WEFT_COEF_CI_HIGH = 5,
    WEFT_COEF_COLUMNS = 6
};

/** Number of estimated terms (intercept and period indicators included, dropped
 *  terms not) into *n_terms. Errors: WEFT_EINVAL if an argument is NULL. */
WEFT_API int weft_model_term_count(const weft_model *model, size_t *n_terms);

/** Name of estimated term `index` (0-based, in table order: intercept first if
 *  present, then regressors, then "period <value>" indicators), borrowed from the
 *  model. Errors: WEFT_EINVAL (NULL), WEFT_ERANGE (index >= term count; *name = NULL). */
WEFT_API int weft_model_term_name(const weft_model *model, size_t index,
                                  const char **name);

/** The coefficient table, row-major: n_terms rows by WEFT_COEF_COLUMNS columns
 *  (coefficient, standard error, t ratio, two-sided p, and the interval from and to
 *  at the model's level), row r
 *  for term r. *needed = n_terms * WEFT_COEF_COLUMNS. Buffer convention as at the
 *  top. Errors: WEFT_EINVAL (NULL model), WEFT_EBUFFER. */
WEFT_API int weft_model_coefficients(const weft_model *model, double *buf,
                                     size_t capacity, size_t *needed);

/** The covariance matrix of the estimates under the model's standard errors,
 *  row-major n_terms by n_terms in term order. *needed = n_terms * n_terms. Buffer
 *  convention as at the top. Errors: WEFT_EINVAL (NULL model), WEFT_EBUFFER. */
WEFT_API int weft_model_covariance(const weft_model *model, double *buf,
                                   size_t capacity, size_t *needed);

/** Number of terms dropped (collinear, or no variation within units for within/fd)
 *  into *n_dropped. Errors: WEFT_EINVAL. */
WEFT_API int weft_model_dropped_count(const weft_model *model, size_t *n_dropped);

/** Dropped term `index`: its name and the reason (a sentence), both borrowed from
 *  the model; either out-pointer may be NULL if not wanted.
 *  Errors: WEFT_EINVAL (NULL model), WEFT_ERANGE (index too large). */
WEFT_API int weft_model_dropped(const weft_model *model, size_t index,
                                const char **term, const char **reason);

/* --- warnings ---------------------------------------------------------------- */

/** Number of warnings attached to the fit (e.g. hc standard errors with within and
 *  few periods, a two-way covariance clipped to positive semi-definite). */
WEFT_API int weft_model_warning_count(const weft_model *model, size_t *n_warnings);

/** Warning `index` as a sentence, borrowed from the model.
 *  Errors: WEFT_EINVAL, WEFT_ERANGE. */
WEFT_API int weft_model_warning(const weft_model *model, size_t index,
                                const char **text);

/* --- summary (WEFT.SUMMARY) -------------------------------------------------- */

/** Kind of a summary item's value. */
enum weft_item_kind {
    WEFT_ITEM_NUMBER = 0,
    WEFT_ITEM_TEXT = 1
};

/** One label/value row of the summary. Layout fixed forever. */
typedef struct weft_summary_item {
    const char *label;  /**< e.g. "observations used"; borrowed from the model */
    int kind;           /**< enum weft_item_kind */
    double number;      /**< the value when kind is WEFT_ITEM_NUMBER, else NaN */
    const char *text;   /**< the value when kind is WEFT_ITEM_TEXT, else ""; never
                             NULL; borrowed from the model */
} weft_summary_item;

/** Number of summary items: the rows of WEFT.SUMMARY. Labels, in this order, with
 *  the kind of value (T text, N number):
 *    "estimator" T, "model" T (the canonical model text), "standard errors" T (with
 *    the finite-sample factor when one is applied), "observations used" N (rows of
 *    the estimated equation: differences for fd, units for between), "rows used" N,
 *    "rows dropped" N (for a missing value), "units" N, "periods" N, "terms" N,
 *    "residual df" N, "df of t, F and intervals" T (number and rule, e.g. "9 (G-1)";
 *    under WEFT_SE_CR2 the range of the per-term df, e.g. "1.8 to 6.4 (Satterthwaite,
 *    per term)"),
 *    "clusters" N (cluster standard errors) or "periods in the covariance" N (dk),
 *    "confidence level" N, "R-squared" N, "adjusted R-squared" N,
 *    then, for within and random, three measures of how closely the slope
 *    prediction (regressors and period indicators times their estimates, without
 *    intercept or unit effects) follows the outcome:
 *    "squared correlation of outcome and slope prediction, all rows" N,
 *    "squared correlation of outcome and slope prediction, unit means" N (one mean
 *    of each per unit) and
 *    "squared correlation of outcome and slope prediction, deviations from unit means"
 *    N (for within the same number as "R-squared"), then
 *    "residual std deviation" N, then the joint test of all regressors (the Wald
 *    test that every regressor's coefficient is 0, not the intercept nor period
 *    indicators, under the model's own standard errors and on their df, e.g. G-1
 *    under cluster; under WEFT_SE_CR2 the HTZ F): "joint test of all regressors, F"
 *    N, "joint test of all regressors, df1" N, "joint test of all regressors, df2"
 *    N, "joint test of all regressors, p-value" N, or, when it cannot be computed
 *    (e.g. fewer clusters than regressors), "joint test of all regressors" T
 *    saying "not available: " and why; then the classical F of all terms but the
 *    intercept (period indicators included, classical covariance, N-K df):
 *    "classical F of all terms" N, "classical F df1" N, "classical F df2" N,
 *    "classical F p-value" N; then "idiosyncratic variance" N and "unit effect variance" N
 *    (random), then one "term dropped" T per dropped term and one "warning" T per
 *    warning.
 *  Items that do not apply are left out, so the count depends on the model; look
 *  items up by label (ABI.md: the list may grow). Errors: WEFT_EINVAL. */
WEFT_API int weft_model_summary_count(const weft_model *model, size_t *n_items);

/** Summary item `index` into *out. Errors: WEFT_EINVAL, WEFT_ERANGE. */
WEFT_API int weft_model_summary_item(const weft_model *model, size_t index,
                                     weft_summary_item *out);

/* --- single numbers (WEFT.VALUE) --------------------------------------------- */

/** One number by name, as WEFT.VALUE: `what` (case-insensitive) is one of "estimate", "se", "t", "p",
 *  "ci-low", "ci-high" (these need `term`, a term name), or (term ignored, may be
 *  NULL) "n" (observations in the estimated equation), "units", "periods", "r2",
 *  "adj-r2", "corr2-rows", "corr2-means", "corr2-deviations" (the three squared
 *  correlations of outcome and slope prediction of the summary, within and random
 *  only; renamed in 0.3.0), "sigma" (residual std
 *  deviation), "df" (df of t, F and intervals under the model's standard errors;
 *  with `term`: that term's df, which differs by term under WEFT_SE_CR2; without a
 *  term under WEFT_SE_CR2: the smallest of the terms' df),
 *  "df-residual", "f", "f-df1", "f-df2", "f-p" (the joint test of all regressors
 *  under the model's standard errors, as the summary; NaN when it is not available;
 *  since 0.3.0, before it was the classical F), "classical-f", "classical-f-df1",
 *  "classical-f-df2", "classical-f-p" (the classical F of all terms), "ssr",
 *  "clusters", "rows-dropped", "weighted" (1 for a weighted fit, else 0; 0.3.0),
 *  "rows-zero-weight" (rows left out for weight 0; 0.3.0), and for random effects "sigma2-idiosyncratic",
 *  "sigma2-unit" and "theta" (the quasi-demeaning weight; NaN when the panel is
 *  unbalanced, where theta differs between units).
 *  *value receives the number (NaN on failure or when it does not apply to this
 *  estimator, e.g. "corr2-means" for pooled, which is still WEFT_OK).
 *  Errors: WEFT_EINVAL (NULL model/what/value, or a term-wise word without term);
 *  WEFT_EMODEL for an unknown `what` (message lists the words); WEFT_ERANGE for a
 *  term the model does not have (message says whether it was dropped). */
WEFT_API int weft_model_value(const weft_model *model, const char *what,
                              const char *term, double *value);

/** The df of t, p and the interval of each term, in term order (since 0.3.0): under
 *  WEFT_SE_CR2 each term's Satterthwaite df (Bell and McCaffrey 2002; Pustejovsky and
 *  Tipton 2018), otherwise the model's one df repeated. *needed = n_terms. Buffer
 *  convention as at the top. Errors: WEFT_EINVAL (NULL model), WEFT_EBUFFER. */
WEFT_API int weft_model_term_df(const weft_model *model, double *buf, size_t capacity,
                                size_t *needed);

/* --- residuals and fitted values (WEFT.RESIDUALS, WEFT.FITTED) -------------- */

/** Residuals of the estimated equation aligned to the panel's input rows: buf[i] is
 *  the residual of input row i, or NaN with unused[i] = 1 when row i is not in the
 *  estimated equation (dropped, or for fd the first period of a unit / after a gap;
 *  fd's residual of a difference is placed on the later row; between has one
 *  residual per unit, placed on every used row of that unit). unused may be NULL.
 *  *needed = n_rows. Buffer convention as at the top.
 *  Errors: WEFT_EINVAL (NULL model), WEFT_EBUFFER. */
WEFT_API int weft_model_residuals(const weft_model *model, double *buf,
                                  unsigned char *unused, size_t capacity,
                                  size_t *needed);

/** Fitted values of the estimated (transformed) equation, aligned like
 *  weft_model_residuals, so that outcome of the estimated equation = fitted +
 *  residual. Errors as weft_model_residuals. */
WEFT_API int weft_model_fitted(const weft_model *model, double *buf,
                               unsigned char *unused, size_t capacity,
                               size_t *needed);

/** The estimated unit effect (unit mean of the outcome minus the unit means of the
 *  regressors times the slopes) of a within model, aligned to the input rows: each
 *  row of the estimated equation holds its unit's effect; other rows hold NaN with
 *  unused[i] = 1 (unused may be NULL). *needed = n_rows. Buffer convention as at
 *  the top. Errors: WEFT_EINVAL (NULL model), WEFT_ECOMPUTE (not a within model:
 *  other estimators do not estimate unit effects), WEFT_EBUFFER. */
WEFT_API int weft_model_unit_effects(const weft_model *model, double *buf,
                                     unsigned char *unused, size_t capacity,
                                     size_t *needed);

/* ------------------------------------------------------------------------------
 * Specification tests. Result layouts never change (ABI.md); a later version adds
 * new structs and functions instead. A number that cannot be computed is NaN.
 * --------------------------------------------------------------------------- */

/** The warnings of the most recent weft_test_* call on this thread, joined with
 *  "; " (e.g. a Hausman comparison whose classical form cannot be trusted, or
 *  auxiliary terms of white-full dropped as collinear); "" when it had none or
 *  failed. Never NULL. Valid until the next weft_test_* call on this thread. */
WEFT_API const char *weft_test_warnings(void);

/** Wald test that named terms are all zero (WEFT.JOINT). */
typedef struct weft_wald_result {
    double f;         /**< W / q */
    double f_df1;     /**< q */
    double f_df2;     /**< the model's inference df; under WEFT_SE_CR2 f is the HTZ
                           F (Pustejovsky and Tipton 2018), f_df2 its denominator df */
    double f_p;       /**< upper tail of F(q, df2) */
    double chi2;      /**< W */
    double chi2_df;   /**< q */
    double chi2_p;    /**< upper tail of chi-square(q) */
} weft_wald_result;

/** Wald test that the n_terms terms named in terms[] are all zero, under the
 *  model's covariance. Errors: WEFT_EINVAL (NULL model/terms/out, n_terms 0, or a
 *  term named twice); WEFT_ERANGE (a name the model does not estimate: message
 *  names it and says whether it was dropped); WEFT_ECOMPUTE (singular R V R'). */
WEFT_API int weft_test_joint(const weft_model *model, const char *const *terms,
                             size_t n_terms, weft_wald_result *out);

/** Wald test of q linear restrictions R b = r under the model's covariance.
 *  restriction is R, row-major q by n_terms in term order (weft_model_term_name);
 *  value is r (q numbers; NULL means all zero). The F form uses the model's
 *  inference df, as weft_test_joint. Errors: WEFT_EINVAL (NULL model/restriction/
 *  out, q = 0, a non-finite number in R or r); WEFT_ECOMPUTE (R V R' singular, e.g.
 *  a restriction repeated). */
WEFT_API int weft_test_linear(const weft_model *model, const double *restriction,
                              size_t q, const double *value, weft_wald_result *out);

/** As weft_test_joint with the names given as one text separated by commas
 *  (spaces around names are ignored), e.g. "value, capital". */
WEFT_API int weft_test_joint_list(const weft_model *model, const char *term_list,
                                  weft_wald_result *out);

/** Heteroskedasticity test forms (append-only). */
enum weft_hetero_form {
    WEFT_HETERO_KOENKER = 0,        /**< studentized Breusch-Pagan, N R^2 */
    WEFT_HETERO_BP = 1,             /**< original Breusch-Pagan */
    WEFT_HETERO_WHITE_SPECIAL = 2,  /**< on fitted and fitted squared */
    WEFT_HETERO_WHITE_FULL = 3      /**< regressors, squares, cross products */
};

/** Parse a form word ("koenker", "bp", "white-special", "white-full"; NULL or ""
 *  gives koenker) into *form. Errors: WEFT_EINVAL (form NULL), WEFT_EMODEL (unknown
 *  word; message lists the words). */
WEFT_API int weft_hetero_form_parse(const char *word, int *form);

/** Result of a heteroskedasticity test (WEFT.HETERO). */
typedef struct weft_hetero_result {
    double lm;        /**< LM statistic */
    double lm_df;     /**< its chi-square df */
    double lm_p;
    double f;         /**< F form (R^2/q)/((1-R^2)/(N-q-1)) of the same auxiliary
                           regression (for bp too) */
    double f_df1;
    double f_df2;
    double f_p;       /**< upper tail of F(f_df1, f_df2) */
    double aux_r2;    /**< R^2 of the auxiliary regression of u^2 */
} weft_hetero_result;

/** Heteroskedasticity test of the model's residuals, form an enum weft_hetero_form.
 *  Errors: WEFT_EINVAL (NULL, unknown form); WEFT_ECOMPUTE (too few rows for the
 *  auxiliary regression, e.g. white-full with many regressors). */
WEFT_API int weft_test_hetero(const weft_model *model, int form,
                              weft_hetero_result *out);

/** Result of the serial-correlation check (WEFT.SERIAL). */
typedef struct weft_serial_result {
    double intercept;   /**< intercept of that regression */
    double slope;       /**< OLS slope of u_it on [1, u_i,t-1] over adjacent periods */
    double se;          /**< its classical std error */
    double t;
    double p;           /**< two-sided, t(pairs - 2) */
    double df;          /**< pairs - 2 */
    double pairs;       /**< number of (t-1, t) residual pairs used */
    double units;       /**< units contributing a pair (the clusters G) */
    double level_null;  /**< slope under no serial correlation in the level errors:
                             -0.5 for fd, -1/(T-1) for within; this and every level_
                             field is NaN for other estimators */
    double level_se;    /**< cluster-by-unit (CR1) std error of the slope */
    double level_f;     /**< ((slope - level_null) / level_se)^2 */
    double level_df1;   /**< 1 */
    double level_df2;   /**< clusters - 1 */
    double level_p;     /**< upper tail of F(1, level_df2) */
} weft_serial_result;

/** AR(1) check of the residuals within units (gap-aware) and, for fd and within,
 *  the level-error test. Errors: WEFT_EINVAL; WEFT_ECOMPUTE (between, which has one
 *  row per unit; no unit with two adjacent periods; fewer than 3 pairs or 2 units). */
WEFT_API int weft_test_serial(const weft_model *model, weft_serial_result *out);

/** Result of the fixed- versus random-effects comparison (WEFT.HAUSMAN). */
typedef struct weft_hausman_result {
    double statistic;          /**< H as computed (negative or too small when
                                    positive_definite is 0: read the robust form) */
    double df;                 /**< the rank of the covariance difference (equal
                                    to the number of slopes compared when that
                                    difference has full rank; since 0.3.0 the rank
                                    is judged in the difference's scaled basis,
                                    so it does not depend on units) */
    double p;                  /**< upper tail of chi-square(df) at H (1 if H <= 0) */
    double rank;               /**< rank of the covariance difference, within
                                    minus random: its eigenvalues in the basis of
                                    the within variances (D (V_W - V_R) D, D =
                                    diag(V_W)^-1/2) larger than 1e-10 of the
                                    largest in absolute value */
    int positive_definite;     /**< 1 if the within covariance exceeds the random
                                    one in every direction (the difference is
                                    positive definite); 0: read the robust form */
    weft_wald_result robust;   /**< auxiliary regression (unit means of X added to
                                    the random-effects equation), cluster by unit
                                    (CR1), F on (q, G-1) */
    weft_wald_result auxiliary_classical;  /**< the same regression with classical
                                    covariance, F on (q, N-K) */
} weft_hausman_result;

/** Fit within and random effects to the panel with *options (NULL: defaults; its
 *  estimator and se fields are ignored: both estimators are fitted, the classical
 *  form uses classical covariances, the robust form clusters by unit) and compare.
 *  Errors: as weft_model_new; WEFT_ECOMPUTE (no slope common to both fits). */
WEFT_API int weft_test_hausman(const weft_panel *panel, const weft_options *options,
                               weft_hausman_result *out);

/** Result of the unit-effects F test (WEFT.EFFECTS). */
typedef struct weft_effects_result {
    double f;
    double df1;   /**< n - 1 when no regressor is time-invariant */
    double df2;   /**< N - n - K */
    double p;
    double ssr_pooled;   /**< residual sum of squares of the pooled comparator */
    double ssr_within;   /**< residual sum of squares of the within fit */
} weft_effects_result;

/** Do the units differ in level? F test of within against pooled OLS on the same rows
 *  (a small p says pooled OLS leaves out real unit effects: use within, fd or random),
 *  with *options (NULL: defaults; estimator and se ignored; period_effects and
 *  intercept used). Errors: as weft_model_new. */
WEFT_API int weft_test_effects(const weft_panel *panel, const weft_options *options,
                               weft_effects_result *out);

/* ------------------------------------------------------------------------------
 * Wild cluster bootstrap (0.3.0)
 * --------------------------------------------------------------------------- */

/** Weight schemes of the wild cluster bootstrap (append-only). */
enum weft_boot_weights {
    WEFT_BOOT_RADEMACHER = 1,   /**< +1 or -1 with probability 1/2 */
    WEFT_BOOT_WEBB = 2          /**< Webb (2023) six points +-sqrt(1/2), +-1, +-sqrt(3/2) */
};

/** Result of the wild cluster bootstrap test of one term (WEFT.BOOTSTRAP). */
typedef struct weft_bootstrap_result {
    double estimate;     /**< the model's estimate of the term */
    double null_value;   /**< the tested value (settings word null=V; 0 by default) */
    double p;            /**< symmetric bootstrap p-value: the share of draws with
                              |t*| >= |t|, ties within relative 1e-10 counted */
    double ci_low;       /**< interval by test inversion at the model's level: the
                              tested values whose p-value is at least 1 - level;
                              -INFINITY when no value below the estimate is rejected */
    double ci_high;      /**< +INFINITY when no value above the estimate is rejected */
    double level;        /**< the model's confidence level */
    double draws;        /**< draws used: 2^G when the sign patterns were enumerated */
    int weights;         /**< enum weft_boot_weights */
    int enumerated;      /**< 1 when every Rademacher sign pattern was used once */
    double clusters;     /**< G */
    int by_period;       /**< 1 when the clusters are periods, 0 units */
    double t;            /**< t statistic of the sample with the CR1 covariance of the
                              same clusters (G/(G-1) (N-1)/(N-K)) */
} weft_bootstrap_result;

/** Restricted wild cluster bootstrap-t of one term (Cameron, Gelbach and Miller
 *  2008; the per-cluster algebra of Roodman, MacKinnon, Nielsen and Webb 2019):
 *  H0 term = null_value imposed, CR1 t in every draw, clusters as in the model's
 *  standard errors (periods under WEFT_SE_CLUSTER_PERIOD, units otherwise).
 *  settings is a text of words separated by spaces or commas (NULL or "": the
 *  defaults): draws=N (99 to 1000000, default 9999), seed=S (whole number 0 to
 *  2^53 - 1, default 1), rademacher or webb (default: Rademacher, every sign pattern
 *  once when 2^G <= draws; otherwise Webb when G <= 12 and Rademacher above),
 *  null=V. Random weights come from weft's own generator (xoshiro256** seeded by
 *  splitmix64, see core/src/bootstrap.cpp), so the same model, term and settings give
 *  the same result on every call and machine. Warnings (few sign patterns, an
 *  unbounded interval) are in weft_test_warnings(). A lean model is refitted in full
 *  once (as for the other tests that need the equation's rows).
 *  Errors: WEFT_EINVAL (NULL model/term/out); WEFT_EMODEL (a bad settings word:
 *  message names it and lists the words); WEFT_ERANGE (a term the model does not
 *  estimate); WEFT_ECOMPUTE (one cluster, two-way clusters, period clusters with
 *  within or random, an exact fit). On failure the doubles of *out are NaN and its
 *  ints 0. */
WEFT_API int weft_test_bootstrap(const weft_model *model, const char *term,
                                 const char *settings, weft_bootstrap_result *out);

/* ------------------------------------------------------------------------------
 * Difference in differences and event studies (0.3.0; WEFT.EVENT, WEFT.DID).
 * CONVENTIONS.md "Difference in differences and event studies" is the statistical
 * specification.
 * --------------------------------------------------------------------------- */

/** An opaque estimated event study: effects by event time, by cohort and overall,
 *  and the pre-treatment test. */
typedef struct weft_event weft_event;

/** Estimate an event study. The panel supplies the outcome (weft_panel_set_outcome),
 *  the units, the periods, and as controls its regressors (none is fine); treatment
 *  is an array of the panel's n_rows values, 1 from a unit's first treated period
 *  on and 0 before (and always 0 for never-treated units); treatment_missing (NULL:
 *  nothing missing) marks blank cells with nonzero bytes. A row is used when its
 *  outcome, treatment, controls, unit and period are all present.
 *  design_text: the design words of FUNCTIONS.md ("group-time" (default),
 *  "imputation" or "twfe"; "never" (default) or "not-yet"; "anticipation=K";
 *  "before=L", "after=M" (default: every event time in the data); "level=0.95");
 *  NULL or "" gives the defaults.
 *  A unit treated in its own first observed period (e.g. a cohort treated in the
 *  panel's first period) has no untreated period: it is left out and named in a
 *  warning (weft_event_warning). On success *out receives a new handle the caller
 *  frees with weft_event_free; it does not refer to the panel or the arrays.
 *  Errors: WEFT_EINVAL (NULL out, panel or treatment; panel without units, periods
 *  or outcome); WEFT_EMODEL (an unknown or conflicting design word); WEFT_EDATA (a
 *  treatment other than 0 or 1, a unit whose treatment goes back to 0, a treatment
 *  that differs inside a unit-period, a repeated unit-period pair, no unit that
 *  adopts inside the panel, too few rows): the message names the row, unit or word;
 *  WEFT_ENOMEM. On failure *out is NULL. */
WEFT_API int weft_event_new(weft_event **out, const weft_panel *panel, const double *treatment,
                            const unsigned char *treatment_missing, const char *design_text);

/** Release an event study. NULL does nothing. */
WEFT_API void weft_event_free(weft_event *event);

/** Columns of the event-time table, in this order. */
#define WEFT_EVENT_COLUMNS 8

/** The event-time table (WEFT.EVENT without its header row): one row per event time
 *  from -before to after, row-major, WEFT_EVENT_COLUMNS numbers a row: event time,
 *  estimate, standard error, t, p-value, interval low, interval high, treated units
 *  contributing. An effect that cannot be estimated has NaN in columns 1 to 6. Under
 *  twfe the reference event time has estimate 0 and NaN in columns 2 to 6 (see
 *  weft_event_reference). *needed = rows * WEFT_EVENT_COLUMNS. Buffer convention as
 *  at the top. Errors: WEFT_EINVAL, WEFT_EBUFFER. */
WEFT_API int weft_event_table(const weft_event *event, double *buf, size_t capacity,
                              size_t *needed);

/** Number of rows of the event-time table into *n_rows. Errors: WEFT_EINVAL. */
WEFT_API int weft_event_row_count(const weft_event *event, size_t *n_rows);

/** *is_reference = 1 when table row `row` is twfe's reference event time, else 0.
 *  Errors: WEFT_EINVAL, WEFT_ERANGE (row past the end). */
WEFT_API int weft_event_reference(const weft_event *event, size_t row, int *is_reference);

/** Number of label/value items of WEFT.DID. Labels, in this order (T text, N number):
 *  "estimator" T, "comparison group" T, "design" T (the canonical design text),
 *  "units" N, "treated units" N, "comparison units" N, "cohorts" N, "rows used" N,
 *  "rows dropped" N, "average effect on the treated" N, "std error" N, "t" N,
 *  "p-value" N, "interval low" N, "interval high" N, "inference" T, then for every
 *  cohort "cohort <period>" N (its average effect after adoption) and
 *  "cohort <period> std error" N, then "pre-treatment test chi-square" N,
 *  "pre-treatment test df" N, "pre-treatment test p-value" N (when the test is not
 *  available: the single item "pre-treatment test" T "not available: <reason>"),
 *  then one "warning" T per warning. A number that cannot be estimated is the text
 *  "not estimated". Items are looked up by label (ABI.md: the list may grow).
 *  Errors: WEFT_EINVAL. */
WEFT_API int weft_event_summary_count(const weft_event *event, size_t *n_items);

/** Item `index` into *out (strings borrowed from the handle, valid until it is
 *  freed). Errors: WEFT_EINVAL, WEFT_ERANGE. */
WEFT_API int weft_event_summary_item(const weft_event *event, size_t index,
                                     weft_summary_item *out);

/** Number of warnings (also the "warning" items of the summary). Errors: WEFT_EINVAL. */
WEFT_API int weft_event_warning_count(const weft_event *event, size_t *n_warnings);

/** Warning `index` as a borrowed string into *text. Errors: WEFT_EINVAL, WEFT_ERANGE. */
WEFT_API int weft_event_warning(const weft_event *event, size_t index, const char **text);

/* ------------------------------------------------------------------------------
 * Fit over partitions (0.3.0): the same fit computed on partitions of whole units
 * (e.g. inside a distributed engine) and merged. Pooled, fd and within, with or
 * without period indicators, weighted or not; standard errors classical, hc0, hc1,
 * cluster, cluster0, cluster-period and dk. Other models are refused (WEFT_EMODEL)
 * with a message naming what to use. Weights come as for weft_model_new: the panel's
 * weight column (weft_panel_set_weights) or the model word weights=NAME, the same way
 * in every partition (merging a weighted partial with an unweighted one is WEFT_EDATA);
 * a weighted within fit gives no squared correlations at levels, as on one machine.
 *
 *   grid    : sorted distinct periods of every row of every partition (the host
 *             merges them first; the periods as the panel holds them)
 *   pass 1  : weft_partial_sums per partition, merged with weft_partial_merge
 *   pass 2  : weft_partial_scores per partition with the merged sums, merged
 *   finish  : weft_partial_finish(sums, scores) -> a weft_model
 *   pass 3  : weft_partial_series per partition with the merged sums and scores gives
 *             that partition's residuals and fitted values (optional)
 *
 * A partition must hold every row of each of its units; a unit split across
 * partitions gives wrong numbers that weft cannot detect (the host checks it).
 * Partials travel as bytes (weft_partial_bytes / weft_partial_from_bytes): a format
 * version and a check sum make a damaged or foreign buffer an error, never a number.
 * Handles from weft_partial_sums, weft_partial_scores and weft_partial_from_bytes are
 * the caller's, freed with weft_partial_free; they keep nothing of the panel.
 * A model from weft_partial_finish answers every weft_model_* getter and
 * weft_test_joint / weft_test_linear; what needs the equation's rows (residuals and
 * fitted values: use weft_partial_series on each partition; unit effects, weft_test_hetero, weft_test_serial,
 * weft_test_bootstrap) gives WEFT_ECOMPUTE.
 * --------------------------------------------------------------------------- */

/** An opaque partial result of a fit over partitions: pass-1 sums or pass-2 scores. */
typedef struct weft_partial weft_partial;

/** Kinds of partial (weft_partial_kind). */
enum weft_partial_kind { WEFT_PARTIAL_SUMS = 1, WEFT_PARTIAL_SCORES = 2 };

/** Pass 1 on one partition: the panel's rows under the model text, with the global
 *  period grid (n_grid sorted distinct values). *out receives a new partial of kind
 *  WEFT_PARTIAL_SUMS (NULL on failure). Errors: WEFT_EINVAL (NULL out, panel or grid,
 *  columns not set), WEFT_EMODEL (a model word, or a model the route refuses),
 *  WEFT_EDATA (the data as weft_model_new; a period not on the grid; a grid not
 *  sorted), WEFT_ENOMEM. */
WEFT_API int weft_partial_sums(weft_partial **out, const weft_panel *panel, const char *model_text,
                               const double *grid, size_t n_grid);

/** Pass 2 on one partition, with the sums of every partition merged. *out receives a
 *  new partial of kind WEFT_PARTIAL_SCORES. Errors: WEFT_EINVAL (NULL, or sums not of
 *  kind WEFT_PARTIAL_SUMS), WEFT_EDATA (the data, or no estimate can be made from the
 *  sums: the message says why), WEFT_ENOMEM. */
WEFT_API int weft_partial_scores(weft_partial **out, const weft_panel *panel, const weft_partial *sums);

/** into += other (same kind, same model, grid and columns; any order and grouping
 *  gives the same fit to rounding). other is unchanged. Errors: WEFT_EINVAL (NULL,
 *  kinds differ), WEFT_EDATA (made for different models, grids or columns). */
WEFT_API int weft_partial_merge(weft_partial *into, const weft_partial *other);

/** The partial as bytes. *needed = their count. Buffer convention as at the top.
 *  Errors: WEFT_EINVAL, WEFT_EBUFFER. */
WEFT_API int weft_partial_bytes(const weft_partial *partial, unsigned char *buf, size_t capacity,
                                size_t *needed);

/** A new partial read from bytes written by weft_partial_bytes (copied; the bytes may
 *  be freed after). Errors: WEFT_EINVAL (NULL), WEFT_EDATA (not a partial, another
 *  format version, truncated, or a check sum that does not match). */
WEFT_API int weft_partial_from_bytes(weft_partial **out, const unsigned char *bytes, size_t size);

/** The kind of a partial (enum weft_partial_kind) into *kind. Errors: WEFT_EINVAL. */
WEFT_API int weft_partial_kind(const weft_partial *partial, int *kind);

/** The fitted model from the merged sums and scores; free it with weft_model_free.
 *  Errors: WEFT_EINVAL (NULL, wrong kinds), WEFT_EDATA (scores not made from these
 *  sums, fewer than 2 clusters, too few rows...), WEFT_ENOMEM. */
WEFT_API int weft_partial_finish(weft_model **out, const weft_partial *sums, const weft_partial *scores);

/** Pass 3 on one partition, after the finish: the residuals and fitted values
 *  of the finished fit on this partition's rows, with the merged sums and scores that
 *  weft_partial_finish took (the same estimates). The caller owns the arrays; each of
 *  residuals, fitted and unused has `rows` entries (any may be NULL: not written), and
 *  rows must be the panel's row count. Aligned to the panel's rows as
 *  weft_model_residuals / weft_model_fitted of a weft_model_new fit on the whole data:
 *  y - x'b and x'b of the estimated equation in the outcome's units, NaN with unused 1
 *  where the row is not in the equation (dropped, weight 0; fd: the earlier row of each
 *  difference and a row with no earlier period). Errors: WEFT_EINVAL (NULL panel, sums
 *  or scores, wrong kinds, columns not set), WEFT_EBUFFER (rows is not the panel's row
 *  count), WEFT_EDATA (the data as weft_partial_scores; scores not made from these
 *  sums), WEFT_ENOMEM. */
WEFT_API int weft_partial_series(const weft_panel *panel, const weft_partial *sums, const weft_partial *scores,
                                 double *residuals, double *fitted, unsigned char *unused, size_t rows);

/** Release a partial. NULL does nothing. */
WEFT_API void weft_partial_free(weft_partial *partial);

#ifdef __cplusplus
}
#endif

#endif /* WEFT_H */
