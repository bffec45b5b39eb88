/*
 * c_consumer.c - a plain C99 program that uses every function of weft.h, the way a
 * host would, and checks the results against outside references and every error
 * path (status code and message).
 *
 * Usage: c_consumer <path to tests/data/panel/grunfeld.csv>
 *
 * Expected numbers and where they come from (named beside each check):
 *   P: tests/data/panel/grunfeld_pooled.json   (R plm/sandwich/lmtest, mpmath check)
 *   F: tests/data/panel/grunfeld_fd.json
 *   B: tests/data/panel/grunfeld_between.json
 *   R: tests/data/panel/grunfeld_within_random_plm.txt (R plm 2.6.2 via
 *      tests/cabi/plm_reference.R)
 *   D: the data file itself (grunfeld.csv rows), for transforms and counts.
 * Tolerance 1e-9 relative for reference numbers (the README of the reference set says
 * 1e-9 is safe); identities such as fitted + residual = outcome use 1e-12.
 */
#include "weft.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---------------------------------------------------------------- checking */

static int checks = 0;
static int failures = 0;

static void check_at(int ok, const char *what, int line)
{
    ++checks;
    if (!ok) {
        ++failures;
        fprintf(stderr, "c_consumer.c:%d: FAILED: %s\n", line, what);
    }
}
#define CHECK(cond) check_at((cond) ? 1 : 0, #cond, __LINE__)

static void near_at(double got, double want, double rel, const char *what, const char *source,
                    int line)
{
    double diff = fabs(got - want);
    double scale = fabs(want) > 1e-300 ? fabs(want) : 1.0;
    ++checks;
    if (!(diff <= rel * scale)) {
        ++failures;
        fprintf(stderr, "c_consumer.c:%d: FAILED: %s = %.17g, expected %.17g (%s), rel diff %.3g\n",
                line, what, got, want, source, diff / scale);
    }
}
#define NEAR(got, want, source) near_at((got), (want), 1e-9, #got, (source), __LINE__)
#define NEAR_TOL(got, want, rel, source) near_at((got), (want), (rel), #got, (source), __LINE__)

/* An error path: the status must be `want`, the last-error text must begin with
 * "weft: " and contain `fragment` (the problem it names). */
static void error_at(int status, int want, const char *fragment, const char *call, int line)
{
    const char *message = weft_last_error();
    ++checks;
    if (status != want || message == NULL || strncmp(message, "weft: ", 6) != 0 ||
        strstr(message, fragment) == NULL) {
        ++failures;
        fprintf(stderr,
                "c_consumer.c:%d: FAILED: %s\n  status %d (%s), expected %d (%s)\n"
                "  message \"%s\", expected to begin with \"weft: \" and contain \"%s\"\n",
                line, call, status, weft_status_text(status), want, weft_status_text(want),
                message ? message : "(NULL)", fragment);
    }
}
#define EXPECT_ERROR(call, want, fragment) error_at((call), (want), (fragment), #call, __LINE__)

static void ok_at(int status, const char *call, int line)
{
    ++checks;
    if (status != WEFT_OK) {
        ++failures;
        fprintf(stderr, "c_consumer.c:%d: FAILED: %s returned %d: %s\n", line, call, status,
                weft_last_error());
    }
}
#define OK(call) ok_at((call), #call, __LINE__)

/* ---------------------------------------------------------------- data */

#define MAX_ROWS 200
typedef struct grunfeld {
    size_t n;
    double firm[MAX_ROWS], year[MAX_ROWS], inv[MAX_ROWS], value[MAX_ROWS], capital[MAX_ROWS];
} grunfeld;

static int read_grunfeld(const char *path, grunfeld *g)
{
    char line[256];
    FILE *f = fopen(path, "r");
    if (f == NULL) return 0;
    g->n = 0;
    if (fgets(line, sizeof line, f) == NULL) { fclose(f); return 0; } /* header */
    while (g->n < MAX_ROWS && fgets(line, sizeof line, f) != NULL) {
        size_t i = g->n;
        if (sscanf(line, "%lf,%lf,%lf,%lf,%lf", &g->firm[i], &g->year[i], &g->inv[i],
                   &g->value[i], &g->capital[i]) == 5)
            ++g->n;
    }
    fclose(f);
    return g->n == MAX_ROWS;
}

/* The panel of every Grunfeld model: inv on value and capital, units by firm number
 * (or as text "firm <n>"), data starting at sheet row 2 under a header. */
static weft_panel *make_panel(const grunfeld *g, int text_units, const double *inv,
                              const unsigned char *inv_missing)
{
    weft_panel *p = NULL;
    OK(weft_panel_new(&p, g->n, 2));
    if (p == NULL) return NULL;
    if (text_units) {
        static char storage[MAX_ROWS][16];
        const char *ids[MAX_ROWS];
        size_t i;
        for (i = 0; i < g->n; ++i) {
            sprintf(storage[i], "firm %d", (int)g->firm[i]);
            ids[i] = storage[i];
        }
        OK(weft_panel_set_units_text(p, ids, NULL));
    } else {
        OK(weft_panel_set_units_number(p, g->firm, NULL));
    }
    OK(weft_panel_set_periods(p, g->year, NULL));
    OK(weft_panel_set_outcome(p, "inv", inv ? inv : g->inv, inv_missing));
    OK(weft_panel_add_regressor(p, "value", g->value, NULL));
    OK(weft_panel_add_regressor(p, "capital", g->capital, NULL));
    return p;
}

static weft_model *fit_text(const weft_panel *p, const char *text)
{
    weft_model *m = NULL;
    OK(weft_model_new_text(&m, p, text));
    return m;
}

/* Index of a term, or (size_t)-1. */
static size_t term_index(const weft_model *m, const char *name)
{
    size_t n = 0, i;
    OK(weft_model_term_count(m, &n));
    for (i = 0; i < n; ++i) {
        const char *t = NULL;
        OK(weft_model_term_name(m, i, &t));
        if (t != NULL && strcmp(t, name) == 0) return i;
    }
    return (size_t)-1;
}

/* A summary item by label (first match), or -1. */
static int summary_find(const weft_model *m, const char *label, weft_summary_item *out)
{
    size_t n = 0, i;
    OK(weft_model_summary_count(m, &n));
    for (i = 0; i < n; ++i) {
        OK(weft_model_summary_item(m, i, out));
        if (strcmp(out->label, label) == 0) return (int)i;
    }
    return -1;
}

static double value_of(const weft_model *m, const char *what, const char *term)
{
    double v = -12345.0;
    OK(weft_model_value(m, what, term, &v));
    return v;
}

/* ---------------------------------------------------------------- sections */

static void test_versions_and_status(void)
{
    /* Header and library agree (the version test proper is version_agree.c). */
    CHECK(weft_version_number() == WEFT_VERSION_NUMBER);
    CHECK(strcmp(weft_version_text(), WEFT_VERSION) == 0);
    CHECK(WEFT_VERSION_NUMBER ==
          WEFT_VERSION_MAJOR * 10000 + WEFT_VERSION_MINOR * 100 + WEFT_VERSION_PATCH);

    /* The fixed texts of weft.h's status enum. */
    CHECK(strcmp(weft_status_text(WEFT_OK), "success") == 0);
    CHECK(strcmp(weft_status_text(WEFT_EINVAL), "invalid argument") == 0);
    CHECK(strcmp(weft_status_text(WEFT_ENOMEM), "out of memory") == 0);
    CHECK(strcmp(weft_status_text(WEFT_EBUFFER), "buffer too small") == 0);
    CHECK(strcmp(weft_status_text(WEFT_EDATA), "data rejected") == 0);
    CHECK(strcmp(weft_status_text(WEFT_EMODEL), "model text or options rejected") == 0);
    CHECK(strcmp(weft_status_text(WEFT_ERANGE), "index or name not found") == 0);
    CHECK(strcmp(weft_status_text(WEFT_ECOMPUTE), "cannot be computed from these data") == 0);
    CHECK(strcmp(weft_status_text(WEFT_EINTERNAL), "internal error") == 0);
    CHECK(strcmp(weft_status_text(12345), "unknown status") == 0);
    CHECK(strcmp(weft_status_text(-999), "unknown status") == 0);
    /* Append-only numbering (weft.h). */
    CHECK(WEFT_OK == 0 && WEFT_EINVAL == -1 && WEFT_ENOMEM == -2 && WEFT_EBUFFER == -3 &&
          WEFT_EDATA == -4 && WEFT_EMODEL == -5 && WEFT_ERANGE == -6 && WEFT_ECOMPUTE == -7 &&
          WEFT_EINTERNAL == -8);
}

static void test_last_error(void)
{
    /* Runs first: before any failure the text is "weft: no error". */
    CHECK(weft_last_error() != NULL);
    CHECK(strcmp(weft_last_error(), "weft: no error") == 0);
    EXPECT_ERROR(weft_options_init(NULL), WEFT_EINVAL, "options is NULL");
    /* A successful call leaves the text alone; weft_clear_error resets it. */
    {
        weft_options o;
        OK(weft_options_init(&o));
        CHECK(strstr(weft_last_error(), "options is NULL") != NULL);
    }
    weft_clear_error();
    CHECK(strcmp(weft_last_error(), "weft: no error") == 0);
}

static void test_options(void)
{
    weft_options o = WEFT_OPTIONS_INIT, p;
    /* Defaults (weft.h, FUNCTIONS.md "The model text"). */
    CHECK(o.size == sizeof(weft_options) && o.version == WEFT_OPTIONS_VERSION);
    CHECK(o.estimator == WEFT_POOLED && o.se == WEFT_SE_CLASSICAL && o.dk_lag == -1);
    CHECK(o.period_effects == 0 && o.intercept == 1 && o.level == 0.95);
    memset(&p, 0xff, sizeof p);
    OK(weft_options_init(&p));
    CHECK(memcmp(&o, &p, offsetof(weft_options, level)) == 0 && p.level == 0.95);

    OK(weft_options_parse(&p, "fd periods cluster"));
    CHECK(p.estimator == WEFT_FD && p.period_effects == 1 && p.se == WEFT_SE_CLUSTER);
    CHECK(p.intercept == 1 && p.level == 0.95);
    OK(weft_options_parse(&p, "within, dk=2 level=0.9 no-intercept"));
    CHECK(p.estimator == WEFT_WITHIN && p.se == WEFT_SE_DK && p.dk_lag == 2);
    CHECK(p.level == 0.9 && p.intercept == 0 && p.period_effects == 0);
    OK(weft_options_parse(&p, "random hc0"));
    CHECK(p.estimator == WEFT_RANDOM && p.se == WEFT_SE_HC0);
    OK(weft_options_parse(&p, "between hc2"));
    CHECK(p.estimator == WEFT_BETWEEN && p.se == WEFT_SE_HC2);
    OK(weft_options_parse(&p, "hc3"));
    CHECK(p.se == WEFT_SE_HC3);
    OK(weft_options_parse(&p, "hc1"));
    CHECK(p.se == WEFT_SE_HC1);
    OK(weft_options_parse(&p, "cluster0"));
    CHECK(p.se == WEFT_SE_CLUSTER0);
    OK(weft_options_parse(&p, "cluster-period"));
    CHECK(p.se == WEFT_SE_CLUSTER_PERIOD);
    OK(weft_options_parse(&p, "cluster-both"));
    CHECK(p.se == WEFT_SE_CLUSTER_BOTH);
    OK(weft_options_parse(&p, "dk"));
    CHECK(p.se == WEFT_SE_DK && p.dk_lag == -1);
    OK(weft_options_parse(&p, NULL));
    CHECK(memcmp(&o, &p, offsetof(weft_options, level)) == 0 && p.level == 0.95);
    OK(weft_options_parse(&p, ""));
    CHECK(p.estimator == WEFT_POOLED);

    /* Canonical text: the same model in two spellings gives one text, which parses
     * back to the same options (weft.h weft_options_text). */
    {
        char text_a[128], text_b[128], small[4];
        size_t needed = 0;
        weft_options q;
        OK(weft_options_parse(&p, "cluster, periods fd"));
        OK(weft_options_text(&p, NULL, 0, &needed));
        CHECK(needed > 1 && needed < sizeof text_a);
        OK(weft_options_text(&p, text_a, sizeof text_a, &needed));
        CHECK(strlen(text_a) + 1 == needed);
        OK(weft_options_parse(&q, "fd periods cluster level=0.95"));
        OK(weft_options_text(&q, text_b, sizeof text_b, NULL));
        CHECK(strcmp(text_a, text_b) == 0);
        OK(weft_options_parse(&q, text_a));
        CHECK(q.estimator == WEFT_FD && q.se == WEFT_SE_CLUSTER && q.period_effects == 1);
        EXPECT_ERROR(weft_options_text(&p, small, sizeof small, &needed), WEFT_EBUFFER, "buffer holds 4");
        EXPECT_ERROR(weft_options_text(NULL, text_a, sizeof text_a, &needed), WEFT_EINVAL, "options is NULL");
        q.se = 77;
        EXPECT_ERROR(weft_options_text(&q, text_a, sizeof text_a, &needed), WEFT_EINVAL, "se is 77");
    }

    /* Errors name the word (FUNCTIONS.md: unknown or conflicting words). */
    EXPECT_ERROR(weft_options_parse(&p, "fd wobble"), WEFT_EMODEL, "wobble");
    CHECK(p.estimator == WEFT_POOLED); /* defaults on failure */
    EXPECT_ERROR(weft_options_parse(&p, "fd within"), WEFT_EMODEL, "within");
    EXPECT_ERROR(weft_options_parse(&p, "level=1.5"), WEFT_EMODEL, "level");
    EXPECT_ERROR(weft_options_parse(NULL, "fd"), WEFT_EINVAL, "options is NULL");
}

static void test_panel_misuse(const grunfeld *g)
{
    weft_panel *p = (weft_panel *)&p; /* not NULL: must be set to NULL on failure */
    size_t n = 0;
    weft_structure s;
    double buf[4];
    unsigned char mask[4];

    EXPECT_ERROR(weft_panel_new(NULL, 10, 1), WEFT_EINVAL, "out is NULL");
    EXPECT_ERROR(weft_panel_new(&p, 0, 1), WEFT_EINVAL, "n_rows is 0");
    CHECK(p == NULL);
    weft_panel_free(NULL); /* a no-op */

    OK(weft_panel_new(&p, g->n, 2));
    OK(weft_panel_row_count(p, &n));
    CHECK(n == g->n);
    EXPECT_ERROR(weft_panel_row_count(NULL, &n), WEFT_EINVAL, "panel is NULL");
    EXPECT_ERROR(weft_panel_row_count(p, NULL), WEFT_EINVAL, "n_rows is NULL");

    /* Nothing set yet: every use says which column is missing. */
    EXPECT_ERROR(weft_panel_structure(p, &s), WEFT_EINVAL, "no units");
    EXPECT_ERROR(weft_panel_diff(p, g->inv, NULL, 1, buf, mask, 4), WEFT_EINVAL, "no units");
    EXPECT_ERROR(weft_panel_demean(p, g->inv, NULL, buf, mask, 4), WEFT_EINVAL, "no units");
    EXPECT_ERROR(weft_panel_dummies(p, 0, NULL, 0, &n), WEFT_EINVAL, "no periods");
    EXPECT_ERROR(weft_panel_dummy_periods(p, 0, NULL, 0, &n), WEFT_EINVAL, "no periods");
    {
        weft_model *m = (weft_model *)&m;
        EXPECT_ERROR(weft_model_new(&m, p, NULL), WEFT_EINVAL, "no units");
        CHECK(m == NULL);
    }

    EXPECT_ERROR(weft_panel_set_units_number(NULL, g->firm, NULL), WEFT_EINVAL, "panel is NULL");
    EXPECT_ERROR(weft_panel_set_units_number(p, NULL, NULL), WEFT_EINVAL, "ids is NULL");
    EXPECT_ERROR(weft_panel_set_units_text(NULL, NULL, NULL), WEFT_EINVAL, "panel is NULL");
    EXPECT_ERROR(weft_panel_set_units_text(p, NULL, NULL), WEFT_EINVAL, "ids is NULL");
    OK(weft_panel_set_units_number(p, g->firm, NULL));
    EXPECT_ERROR(weft_panel_set_units_number(p, g->firm, NULL), WEFT_EINVAL, "already set");
    {
        const char *ids[1] = {"a"};
        EXPECT_ERROR(weft_panel_set_units_text(p, ids, NULL), WEFT_EINVAL, "already set");
    }
    /* Units but no periods. */
    EXPECT_ERROR(weft_panel_diff(p, g->inv, NULL, 1, buf, mask, 4), WEFT_EINVAL, "no periods");
    EXPECT_ERROR(weft_panel_lag(p, g->inv, NULL, 1, buf, mask, 4), WEFT_EINVAL, "no periods");
    EXPECT_ERROR(weft_panel_period_grid(p, NULL, 0, &n), WEFT_EINVAL, "no periods");

    EXPECT_ERROR(weft_panel_set_periods(NULL, g->year, NULL), WEFT_EINVAL, "panel is NULL");
    EXPECT_ERROR(weft_panel_set_periods(p, NULL, NULL), WEFT_EINVAL, "periods is NULL");
    OK(weft_panel_set_periods(p, g->year, NULL));
    EXPECT_ERROR(weft_panel_set_periods(p, g->year, NULL), WEFT_EINVAL, "already set");
    {
        weft_model *m = NULL;
        EXPECT_ERROR(weft_model_new(&m, p, NULL), WEFT_EINVAL, "no outcome");
    }
    EXPECT_ERROR(weft_panel_set_outcome(NULL, "inv", g->inv, NULL), WEFT_EINVAL, "panel is NULL");
    EXPECT_ERROR(weft_panel_set_outcome(p, "inv", NULL, NULL), WEFT_EINVAL, "values is NULL");
    OK(weft_panel_set_outcome(p, NULL, g->inv, NULL));
    EXPECT_ERROR(weft_panel_set_outcome(p, "inv", g->inv, NULL), WEFT_EINVAL, "already set");
    EXPECT_ERROR(weft_panel_add_regressor(NULL, "value", g->value, NULL), WEFT_EINVAL, "panel is NULL");
    EXPECT_ERROR(weft_panel_add_regressor(p, "value", NULL, NULL), WEFT_EINVAL, "values is NULL");

    /* Unnamed regressors are called x1, x2 (FUNCTIONS.md). */
    OK(weft_panel_add_regressor(p, NULL, g->value, NULL));
    OK(weft_panel_add_regressor(p, "", g->capital, NULL));
    {
        weft_model *m = fit_text(p, "pooled");
        CHECK(term_index(m, "x1") == 1 && term_index(m, "x2") == 2);
        /* Same numbers as the named panel: P results.coef.value. */
        NEAR(value_of(m, "estimate", "x1"), 0.115562156360552, "P results.coef.value");
        weft_model_free(m);
    }
    /* A repeated term name is refused when a model is fitted. */
    OK(weft_panel_add_regressor(p, "x1", g->capital, NULL));
    {
        weft_model *m = NULL;
        EXPECT_ERROR(weft_model_new_text(&m, p, "pooled"), WEFT_EDATA, "both named \"x1\"");
        CHECK(m == NULL);
    }
    weft_panel_free(p);
    /* "intercept" is the constant's name. */
    OK(weft_panel_new(&p, g->n, 2));
    OK(weft_panel_set_units_number(p, g->firm, NULL));
    OK(weft_panel_set_periods(p, g->year, NULL));
    OK(weft_panel_set_outcome(p, "inv", g->inv, NULL));
    OK(weft_panel_add_regressor(p, "intercept", g->value, NULL));
    {
        weft_model *m = NULL;
        EXPECT_ERROR(weft_model_new_text(&m, p, "pooled"), WEFT_EDATA, "named \"intercept\"");
        CHECK(m == NULL);
    }
    weft_panel_free(p);
}

static void test_structure_and_transforms(const grunfeld *g)
{
    weft_panel *p = make_panel(g, 0, NULL, NULL);
    weft_structure s;
    double grid[32], out[MAX_ROWS], small[3];
    unsigned char missing[MAX_ROWS];
    size_t needed = 0, i, n_missing;
    static double block[MAX_ROWS * 20];

    /* D / P sample: 10 firms, 20 years 1935-1954, balanced, 200 rows. */
    OK(weft_panel_structure(p, &s));
    CHECK(s.units == 10 && s.periods == 20 && s.rows == 200 && s.rows_missing == 0);
    CHECK(s.rows_input == 200 && s.balanced == 1 && s.min_periods == 20 && s.max_periods == 20);
    CHECK(s.median_periods == 20.0 && s.gaps == 0 && s.duplicates == 0);
    CHECK(s.single_row_units == 0 && s.units_with_gaps == 0);
    EXPECT_ERROR(weft_panel_structure(NULL, &s), WEFT_EINVAL, "panel is NULL");
    EXPECT_ERROR(weft_panel_structure(p, NULL), WEFT_EINVAL, "out is NULL");

    OK(weft_panel_period_grid(p, NULL, 0, &needed));
    CHECK(needed == 20);
    OK(weft_panel_period_grid(p, grid, 32, &needed));
    CHECK(grid[0] == 1935.0 && grid[19] == 1954.0); /* D */
    EXPECT_ERROR(weft_panel_period_grid(p, small, 3, &needed), WEFT_EBUFFER, "20");
    CHECK(needed == 20);
    EXPECT_ERROR(weft_panel_period_grid(p, NULL, 5, &needed), WEFT_EINVAL, "buf is NULL");

    /* Differences and lags within firm along the years (D: rows 0 and 1 are firm 1,
     * 1935 and 1936; row 20 is firm 2, 1935). */
    OK(weft_panel_diff(p, g->inv, NULL, 1, out, missing, MAX_ROWS));
    CHECK(missing[0] == 1 && isnan(out[0]) && missing[20] == 1);
    CHECK(missing[1] == 0 && out[1] == g->inv[1] - g->inv[0]);
    for (n_missing = 0, i = 0; i < g->n; ++i) n_missing += missing[i];
    CHECK(n_missing == 10); /* D: one first year per firm */
    OK(weft_panel_diff(p, g->inv, NULL, 2, out, NULL, MAX_ROWS));
    CHECK(isnan(out[1]) && out[2] == g->inv[2] - g->inv[0]);
    OK(weft_panel_lag(p, g->inv, NULL, 1, out, missing, MAX_ROWS));
    CHECK(missing[0] == 1 && out[1] == g->inv[0] && out[21] == g->inv[20]);
    OK(weft_panel_lag(p, g->inv, NULL, -1, out, missing, MAX_ROWS));
    CHECK(out[0] == g->inv[1] && missing[19] == 1); /* lead; D: row 19 is firm 1, 1954 */
    {
        /* A missing value gives no lag where it would be used. */
        unsigned char mask[MAX_ROWS];
        memset(mask, 0, sizeof mask);
        mask[0] = 1;
        OK(weft_panel_lag(p, g->inv, mask, 1, out, missing, MAX_ROWS));
        CHECK(missing[1] == 1 && missing[0] == 1 && missing[2] == 0);
    }
    EXPECT_ERROR(weft_panel_diff(p, g->inv, NULL, 0, out, missing, MAX_ROWS), WEFT_EINVAL, "k is 0");
    EXPECT_ERROR(weft_panel_lag(p, g->inv, NULL, 0, out, missing, MAX_ROWS), WEFT_EINVAL, "k is 0");
    EXPECT_ERROR(weft_panel_diff(p, g->inv, NULL, 1, small, missing, 3), WEFT_EBUFFER, "200");
    EXPECT_ERROR(weft_panel_lag(p, g->inv, NULL, 1, small, missing, 3), WEFT_EBUFFER, "200");
    EXPECT_ERROR(weft_panel_demean(p, g->inv, NULL, small, missing, 3), WEFT_EBUFFER, "200");
    EXPECT_ERROR(weft_panel_diff(NULL, g->inv, NULL, 1, out, missing, MAX_ROWS), WEFT_EINVAL, "panel is NULL");
    EXPECT_ERROR(weft_panel_lag(p, NULL, NULL, 1, out, missing, MAX_ROWS), WEFT_EINVAL, "values is NULL");
    EXPECT_ERROR(weft_panel_demean(p, g->inv, NULL, NULL, missing, MAX_ROWS), WEFT_EINVAL, "out is NULL");

    /* Demeaning: firm 1's mean computed here from the data (D rows 0-19). */
    {
        double mean = 0.0;
        for (i = 0; i < 20; ++i) mean += g->inv[i];
        mean /= 20.0;
        OK(weft_panel_demean(p, g->inv, NULL, out, missing, MAX_ROWS));
        NEAR_TOL(out[0], g->inv[0] - mean, 1e-12, "D firm 1 mean of inv");
        CHECK(missing[0] == 0);
    }

    /* Unit means: firm 1's mean of inv computed here from the data (D rows 0-19). */
    {
        double mean = 0.0;
        for (i = 0; i < 20; ++i) mean += g->inv[i];
        mean /= 20.0;
        OK(weft_panel_unit_means(p, g->inv, NULL, out, missing, MAX_ROWS));
        NEAR_TOL(out[0], mean, 1e-12, "D firm 1 mean of inv");
        NEAR_TOL(out[19], mean, 1e-12, "D firm 1 mean of inv");
        EXPECT_ERROR(weft_panel_unit_means(p, g->inv, NULL, small, missing, 3), WEFT_EBUFFER, "200");
        EXPECT_ERROR(weft_panel_unit_means(NULL, g->inv, NULL, out, missing, MAX_ROWS), WEFT_EINVAL, "panel is NULL");
    }

    /* Period indicators: 20 columns (D), row 0 is 1935. */
    OK(weft_panel_dummies(p, 0, NULL, 0, &needed));
    CHECK(needed == 200 * 20);
    OK(weft_panel_dummies(p, 0, block, MAX_ROWS * 20, &needed));
    CHECK(block[0] == 1.0 && block[1] == 0.0 && block[20 + 1] == 1.0);
    EXPECT_ERROR(weft_panel_dummies(p, 0, small, 3, &needed), WEFT_EBUFFER, "4000");
    OK(weft_panel_dummies(p, 1, block, MAX_ROWS * 20, &needed));
    CHECK(needed == 200 * 19 && block[0] == 0.0 && block[19] == 1.0);
    OK(weft_panel_dummy_periods(p, 1, grid, 32, &needed));
    CHECK(needed == 19 && grid[0] == 1936.0);
    OK(weft_panel_dummy_periods(p, 0, grid, 32, &needed));
    CHECK(needed == 20 && grid[0] == 1935.0);
    EXPECT_ERROR(weft_panel_dummy_periods(p, 0, small, 3, &needed), WEFT_EBUFFER, "20");
    EXPECT_ERROR(weft_panel_dummies(NULL, 0, NULL, 0, &needed), WEFT_EINVAL, "panel is NULL");
    weft_panel_free(p);

    /* Demean needs units only. */
    OK(weft_panel_new(&p, g->n, 1));
    OK(weft_panel_set_units_number(p, g->firm, NULL));
    OK(weft_panel_demean(p, g->inv, NULL, out, NULL, MAX_ROWS));
    weft_panel_free(p);

    /* A repeated (unit, period) pair: counted by the structure report, refused by the
     * transforms and models with a message naming the period. D: row 1 is firm 1. */
    {
        double years[MAX_ROWS];
        weft_model *m = NULL;
        memcpy(years, g->year, sizeof years);
        years[1] = 1935.0;
        OK(weft_panel_new(&p, g->n, 2));
        OK(weft_panel_set_units_number(p, g->firm, NULL));
        OK(weft_panel_set_periods(p, years, NULL));
        OK(weft_panel_set_outcome(p, "inv", g->inv, NULL));
        OK(weft_panel_add_regressor(p, "value", g->value, NULL));
        OK(weft_panel_structure(p, &s));
        CHECK(s.duplicates == 1 && s.balanced == 0);
        EXPECT_ERROR(weft_panel_diff(p, g->inv, NULL, 1, out, NULL, MAX_ROWS), WEFT_EDATA, "1935");
        EXPECT_ERROR(weft_model_new(&m, p, NULL), WEFT_EDATA, "1935");
        CHECK(m == NULL);
        /* sheet rows 2 and 3 (first_row 2, positions 0 and 1) */
        CHECK(strstr(weft_last_error(), "2") != NULL && strstr(weft_last_error(), "3") != NULL);
        weft_panel_free(p);
    }
    /* A NaN period not marked missing: named by its sheet row (position 4 -> row 6). */
    {
        double years[MAX_ROWS];
        memcpy(years, g->year, sizeof years);
        years[4] = NAN;
        OK(weft_panel_new(&p, g->n, 2));
        OK(weft_panel_set_units_number(p, g->firm, NULL));
        OK(weft_panel_set_periods(p, years, NULL));
        EXPECT_ERROR(weft_panel_structure(p, &s), WEFT_EDATA, "row 6");
        EXPECT_ERROR(weft_panel_period_grid(p, NULL, 0, &needed), WEFT_EDATA, "row 6");
        EXPECT_ERROR(weft_panel_dummies(p, 0, NULL, 0, &needed), WEFT_EDATA, "row 6");
        weft_panel_free(p);
    }
}

/* The coefficient table of a model against reference estimates and standard errors. */
static void check_table(const weft_model *m, const char *const *terms, const double *coef,
                        const double *se, size_t k, const char *source)
{
    double table[64];
    size_t needed = 0, i;
    OK(weft_model_coefficients(m, NULL, 0, &needed));
    CHECK(needed == k * WEFT_COEF_COLUMNS);
    OK(weft_model_coefficients(m, table, 64, &needed));
    for (i = 0; i < k; ++i) {
        size_t r = term_index(m, terms[i]);
        CHECK(r != (size_t)-1);
        if (r == (size_t)-1) continue;
        NEAR(table[r * WEFT_COEF_COLUMNS + WEFT_COEF_ESTIMATE], coef[i], source);
        NEAR(table[r * WEFT_COEF_COLUMNS + WEFT_COEF_SE], se[i], source);
        NEAR(value_of(m, "estimate", terms[i]), coef[i], source);
        NEAR(value_of(m, "se", terms[i]), se[i], source);
    }
}

static void test_pooled(const grunfeld *g)
{
    static const char *const terms[] = {"intercept", "value", "capital"};
    /* P results.coef */
    static const double coef[] = {-42.7143694365594, 0.115562156360552, 0.23067848873197};
    /* P results.se.classical */
    static const double se[] = {9.51167603142387, 0.00583570955722063, 0.0254758014765089};
    weft_panel *p = make_panel(g, 0, NULL, NULL);
    weft_options o = WEFT_OPTIONS_INIT;
    weft_model *m = NULL;
    double table[18], small[5], resid[MAX_ROWS], fitted[MAX_ROWS], v;
    unsigned char unused[MAX_ROWS];
    size_t needed = 0, n = 0, i;
    const char *name = NULL;
    weft_summary_item item;
    weft_wald_result w;
    weft_hetero_result h;
    weft_serial_result sr;
    int form = -1;

    OK(weft_model_new(&m, p, &o));
    weft_panel_free(p); /* the model does not borrow the panel */
    OK(weft_model_term_count(m, &n));
    CHECK(n == 3);
    OK(weft_model_term_name(m, 0, &name));
    CHECK(name != NULL && strcmp(name, "intercept") == 0);
    EXPECT_ERROR(weft_model_term_name(m, 3, &name), WEFT_ERANGE, "index 3");
    CHECK(name == NULL);
    check_table(m, terms, coef, se, 3, "P results.coef / results.se.classical");

    OK(weft_model_coefficients(m, table, 18, &needed));
    /* P results.inference.classical (t, p, ci95 at df 197) */
    NEAR(table[1 * 6 + WEFT_COEF_T], 19.8025887387704, "P inference.classical.t.value");
    NEAR(table[1 * 6 + WEFT_COEF_P], 9.54270268578329e-49, "P inference.classical.p.value");
    NEAR(table[0 * 6 + WEFT_COEF_P], 1.20735654138482e-05, "P inference.classical.p.intercept");
    NEAR(table[2 * 6 + WEFT_COEF_CI_LOW], 0.180438194771443, "P inference.classical.ci95_low.capital");
    NEAR(table[2 * 6 + WEFT_COEF_CI_HIGH], 0.280918782692496, "P inference.classical.ci95_high.capital");
    NEAR(value_of(m, "t", "capital"), 9.05480791034884, "P inference.classical.t.capital");
    NEAR(value_of(m, "p", "capital"), 1.34737010512038e-16, "P inference.classical.p.capital");
    NEAR(value_of(m, "ci-low", "intercept"), -61.4721463142239, "P inference.classical.ci95_low.intercept");
    NEAR(value_of(m, "ci-high", "value"), 0.127070636825568, "P inference.classical.ci95_high.value");
    EXPECT_ERROR(weft_model_coefficients(m, small, 5, &needed), WEFT_EBUFFER, "18");
    CHECK(needed == 18);
    EXPECT_ERROR(weft_model_coefficients(m, NULL, 5, &needed), WEFT_EINVAL, "buf is NULL");

    /* Fit statistics: P results.r_squared, adj_r_squared, sigma, df_residual, f_all_terms */
    NEAR(value_of(m, "r2", NULL), 0.812408012544728, "P results.r_squared");
    NEAR(value_of(m, "adj-r2", NULL), 0.810503525362442, "P results.adj_r_squared");
    NEAR(value_of(m, "R2", NULL), 0.812408012544728, "P results.r_squared (word case-insensitive)");
    NEAR(value_of(m, "sigma", NULL), 94.408403332255, "P results.sigma");
    NEAR(value_of(m, "df", NULL), 197, "P results.inference.classical.df");
    NEAR(value_of(m, "df-residual", NULL), 197, "P results.df_residual");
    /* the joint test of all regressors under the model's (classical) covariance */
    NEAR(value_of(m, "f", NULL), 426.575731304814, "P results.wald_subset.classical.F");
    NEAR(value_of(m, "f-df1", NULL), 2, "P results.wald_subset.classical.F_df_resid.df1");
    NEAR(value_of(m, "f-df2", NULL), 197, "P results.wald_subset.classical.F_df_resid.df2");
    NEAR(value_of(m, "f-p", NULL), 2.57992470719404e-72, "P results.wald_subset.classical.F_df_resid.p");
    NEAR(value_of(m, "classical-f", NULL), 426.575731304813, "P results.f_all_terms.F");
    NEAR(value_of(m, "classical-f-df1", NULL), 2, "P results.f_all_terms.df1");
    NEAR(value_of(m, "classical-f-df2", NULL), 197, "P results.f_all_terms.df2");
    NEAR(value_of(m, "classical-f-p", NULL), 2.57992470719433e-72, "P results.f_all_terms.p");
    NEAR(value_of(m, "n", NULL), 200, "P sample.nobs");
    NEAR(value_of(m, "units", NULL), 10, "P sample.n_units");
    NEAR(value_of(m, "periods", NULL), 20, "P sample.n_periods");
    NEAR(value_of(m, "rows-dropped", NULL), 0, "P sample.n_rows_dropped_missing");
    CHECK(isnan(value_of(m, "corr2-deviations", NULL)));   /* does not apply to pooled */
    CHECK(isnan(value_of(m, "clusters", NULL)));    /* classical: no clusters */
    EXPECT_ERROR(weft_model_value(m, "wibble", NULL, &v), WEFT_EMODEL, "\"wibble\" is not a value");
    CHECK(isnan(v));
    EXPECT_ERROR(weft_model_value(m, "estimate", "wages", &v), WEFT_ERANGE, "no term \"wages\"");
    CHECK(strstr(weft_last_error(), "intercept, value, capital") != NULL);
    EXPECT_ERROR(weft_model_value(m, "se", NULL, &v), WEFT_EINVAL, "needs a term name");
    EXPECT_ERROR(weft_model_value(m, "se", "", &v), WEFT_EINVAL, "needs a term name");
    EXPECT_ERROR(weft_model_value(NULL, "n", NULL, &v), WEFT_EINVAL, "model is NULL");
    EXPECT_ERROR(weft_model_value(m, NULL, NULL, &v), WEFT_EINVAL, "what is NULL");
    EXPECT_ERROR(weft_model_value(m, "n", NULL, NULL), WEFT_EINVAL, "value is NULL");

    /* Summary items: labels as weft.h lists them; numbers from P. */
    OK(weft_model_summary_count(m, &n));
    CHECK(n >= 10);
    CHECK(summary_find(m, "estimator", &item) == 0);
    CHECK(item.kind == WEFT_ITEM_TEXT && strcmp(item.text, "pooled OLS") == 0 && isnan(item.number));
    CHECK(summary_find(m, "standard errors", &item) > 0 && item.kind == WEFT_ITEM_TEXT);
    CHECK(summary_find(m, "observations used", &item) > 0);
    CHECK(item.kind == WEFT_ITEM_NUMBER && item.number == 200.0 && strcmp(item.text, "") == 0);
    CHECK(summary_find(m, "R-squared", &item) > 0);
    NEAR(item.number, 0.812408012544728, "P results.r_squared");
    CHECK(summary_find(m, "residual std deviation", &item) > 0);
    NEAR(item.number, 94.408403332255, "P results.sigma");
    CHECK(summary_find(m, "classical F of all terms", &item) > 0);
    NEAR(item.number, 426.575731304813, "P results.f_all_terms.F");
    CHECK(summary_find(m, "joint test of all regressors, F", &item) > 0);
    NEAR(item.number, 426.575731304814, "P results.wald_subset.classical.F");
    CHECK(summary_find(m, "squared correlation of outcome and slope prediction, unit means", &item) ==
          -1); /* pooled: left out */
    CHECK(summary_find(m, "clusters", &item) == -1);
    EXPECT_ERROR(weft_model_summary_item(m, n, &item), WEFT_ERANGE, "past the last summary item");
    EXPECT_ERROR(weft_model_summary_item(m, 0, NULL), WEFT_EINVAL, "out is NULL");
    EXPECT_ERROR(weft_model_summary_count(NULL, &n), WEFT_EINVAL, "model is NULL");

    /* Nothing dropped, no warnings (P dropped_columns is empty). */
    OK(weft_model_dropped_count(m, &n));
    CHECK(n == 0);
    EXPECT_ERROR(weft_model_dropped(m, 0, &name, NULL), WEFT_ERANGE, "past the last dropped term");
    OK(weft_model_warning_count(m, &n));
    CHECK(n == 0);
    EXPECT_ERROR(weft_model_warning(m, 0, &name), WEFT_ERANGE, "past the last warning");

    /* Options read back. */
    {
        weft_options back = WEFT_OPTIONS_INIT;
        back.estimator = WEFT_FD;
        OK(weft_model_options(m, &back));
        CHECK(back.estimator == WEFT_POOLED && back.se == WEFT_SE_CLASSICAL && back.level == 0.95);
        back.size = 3;
        EXPECT_ERROR(weft_model_options(m, &back), WEFT_EINVAL, "out->size is 3");
        EXPECT_ERROR(weft_model_options(m, NULL), WEFT_EINVAL, "out is NULL");
    }

    /* Residuals and fitted values aligned to rows: every row used; fitted + residual =
     * inv (definition); sum of squared residuals = P results.rss. */
    OK(weft_model_residuals(m, NULL, NULL, 0, &needed));
    CHECK(needed == 200);
    OK(weft_model_residuals(m, resid, unused, MAX_ROWS, &needed));
    OK(weft_model_fitted(m, fitted, NULL, MAX_ROWS, NULL));
    {
        double ssr = 0.0;
        int aligned = 1;
        for (i = 0; i < g->n; ++i) {
            ssr += resid[i] * resid[i];
            if (unused[i] != 0 || fabs(fitted[i] + resid[i] - g->inv[i]) > 1e-9 * fabs(g->inv[i]) + 1e-9)
                aligned = 0;
        }
        CHECK(aligned);
        NEAR(ssr, 1755850.48408991, "P results.rss");
    }
    EXPECT_ERROR(weft_model_residuals(m, small, unused, 5, &needed), WEFT_EBUFFER, "200");
    EXPECT_ERROR(weft_model_fitted(m, small, unused, 5, &needed), WEFT_EBUFFER, "200");
    EXPECT_ERROR(weft_model_residuals(NULL, resid, unused, MAX_ROWS, &needed), WEFT_EINVAL, "model is NULL");
    EXPECT_ERROR(weft_model_fitted(NULL, resid, unused, MAX_ROWS, &needed), WEFT_EINVAL, "model is NULL");

    /* Wald test of value and capital, classical: P results.wald_subset.classical */
    {
        const char *names[] = {"value", "capital"};
        const char *twice[] = {"value", "value"};
        const char *unknown[] = {"value", "wages"};
        OK(weft_test_joint(m, names, 2, &w));
        NEAR(w.chi2, 853.151462609627, "P wald_subset.classical.wald_chi2");
        NEAR(w.chi2_p, 5.5019137820059e-186, "P wald_subset.classical.p_chi2");
        NEAR(w.f, 426.575731304814, "P wald_subset.classical.F");
        CHECK(w.chi2_df == 2 && w.f_df1 == 2 && w.f_df2 == 197);
        NEAR(w.f_p, 2.57992470719404e-72, "P wald_subset.classical.F_df_resid.p");
        OK(weft_test_joint_list(m, " value ,capital", &w));
        NEAR(w.chi2, 853.151462609627, "P wald_subset.classical.wald_chi2");
        EXPECT_ERROR(weft_test_joint(m, unknown, 2, &w), WEFT_ERANGE, "no term \"wages\"");
        CHECK(isnan(w.f));
        EXPECT_ERROR(weft_test_joint(m, twice, 2, &w), WEFT_EINVAL, "named twice");
        EXPECT_ERROR(weft_test_joint(m, names, 0, &w), WEFT_EINVAL, "no term is named");
        EXPECT_ERROR(weft_test_joint_list(m, " , ", &w), WEFT_EINVAL, "no term is named");
        EXPECT_ERROR(weft_test_joint_list(m, "capital, wages", &w), WEFT_ERANGE, "wages");
        EXPECT_ERROR(weft_test_joint(NULL, names, 2, &w), WEFT_EINVAL, "model is NULL");
        EXPECT_ERROR(weft_test_joint(m, NULL, 2, &w), WEFT_EINVAL, "terms is NULL");
        EXPECT_ERROR(weft_test_joint(m, names, 2, NULL), WEFT_EINVAL, "out is NULL");
        EXPECT_ERROR(weft_test_joint_list(m, NULL, &w), WEFT_EINVAL, "term_list is NULL");
    }

    /* Heteroskedasticity: P results.heteroskedasticity */
    OK(weft_hetero_form_parse("koenker", &form));
    CHECK(form == WEFT_HETERO_KOENKER);
    OK(weft_hetero_form_parse(NULL, &form));
    CHECK(form == WEFT_HETERO_KOENKER);
    OK(weft_hetero_form_parse("bp", &form));
    CHECK(form == WEFT_HETERO_BP);
    OK(weft_hetero_form_parse("white-special", &form));
    CHECK(form == WEFT_HETERO_WHITE_SPECIAL);
    OK(weft_hetero_form_parse("White-Full", &form));
    CHECK(form == WEFT_HETERO_WHITE_FULL);
    EXPECT_ERROR(weft_hetero_form_parse("levene", &form), WEFT_EMODEL, "levene");
    EXPECT_ERROR(weft_hetero_form_parse("bp", NULL), WEFT_EINVAL, "form is NULL");

    OK(weft_test_hetero(m, WEFT_HETERO_KOENKER, &h));
    CHECK(weft_test_warnings() != NULL && strcmp(weft_test_warnings(), "") == 0);
    NEAR(h.lm, 55.2470842121668, "P heteroskedasticity.koenker_LM.stat");
    NEAR(h.lm_p, 1.00750704749363e-12, "P heteroskedasticity.koenker_LM.p");
    NEAR(h.f, 37.5939770558724, "P heteroskedasticity.F.stat");
    NEAR(h.f_p, 1.48025488621239e-14, "P heteroskedasticity.F.p");
    NEAR(h.aux_r2, 0.276235421060834, "P heteroskedasticity.aux_r_squared");
    CHECK(h.lm_df == 2 && h.f_df1 == 2 && h.f_df2 == 197);
    OK(weft_test_hetero(m, WEFT_HETERO_BP, &h));
    NEAR(h.lm, 142.022163719152, "P heteroskedasticity.original_BP.stat");
    NEAR(h.lm_p, 1.44636863166109e-31, "P heteroskedasticity.original_BP.p");
    OK(weft_test_hetero(m, WEFT_HETERO_WHITE_SPECIAL, &h));
    NEAR(h.lm, 54.6923556383503, "P heteroskedasticity.white_special.LM.stat");
    NEAR(h.f, 37.0744227121978, "P heteroskedasticity.white_special.F.stat");
    NEAR(h.f_p, 2.15754054113715e-14, "P heteroskedasticity.white_special.F.p");
    OK(weft_test_hetero(m, WEFT_HETERO_WHITE_FULL, &h));
    NEAR(h.lm, 91.7902988204292, "P heteroskedasticity.white_full.LM.stat");
    NEAR(h.lm_p, 2.82565472090422e-18, "P heteroskedasticity.white_full.LM.p");
    NEAR(h.f, 32.9126090859683, "P heteroskedasticity.white_full.F.stat");
    CHECK(h.lm_df == 5 && h.f_df2 == 194);
    EXPECT_ERROR(weft_test_hetero(m, 7, &h), WEFT_EINVAL, "form is 7");
    CHECK(strcmp(weft_test_warnings(), "") == 0); /* a failed test leaves no warnings */
    EXPECT_ERROR(weft_test_hetero(m, WEFT_HETERO_BP, NULL), WEFT_EINVAL, "out is NULL");
    EXPECT_ERROR(weft_test_hetero(NULL, WEFT_HETERO_BP, &h), WEFT_EINVAL, "model is NULL");

    /* Covariance matrix: P results.vcov.classical (order intercept, value, capital). */
    {
        static const double vcov[9] = {90.4719809267633, -0.0167830082386874, -0.100549494895887,
                                       -0.0167830082386874, 3.40555060362362e-05, -7.26555903922825e-05,
                                       -0.100549494895887, -7.26555903922825e-05, 0.000649016460870495};
        double got[9];
        OK(weft_model_covariance(m, NULL, 0, &needed));
        CHECK(needed == 9);
        OK(weft_model_covariance(m, got, 9, &needed));
        for (i = 0; i < 9; ++i) NEAR(got[i], vcov[i], "P results.vcov.classical");
        EXPECT_ERROR(weft_model_covariance(m, got, 8, &needed), WEFT_EBUFFER, "9");
        EXPECT_ERROR(weft_model_covariance(NULL, got, 9, &needed), WEFT_EINVAL, "model is NULL");
    }

    /* General linear restrictions R b = r. */
    {
        const double both[6] = {0, 1, 0, 0, 0, 1};
        const double one[3] = {0, 1, 0};
        const double twice[6] = {0, 1, 0, 0, 1, 0};
        const double bad[3] = {0, NAN, 0};
        const double r_value[1] = {0.1};
        const double r_bad[1] = {HUGE_VAL};
        /* value and capital both zero: P wald_subset.classical */
        OK(weft_test_linear(m, both, 2, NULL, &w));
        NEAR(w.chi2, 853.151462609627, "P wald_subset.classical.wald_chi2");
        NEAR(w.f_p, 2.57992470719404e-72, "P wald_subset.classical.F_df_resid.p");
        /* one restriction: F = t^2 with t from P inference.classical.t.value */
        OK(weft_test_linear(m, one, 1, NULL, &w));
        NEAR(w.f, 19.8025887387704 * 19.8025887387704, "P inference.classical.t.value squared");
        CHECK(w.f_df1 == 1 && w.f_df2 == 197);
        /* value = 0.1: F = ((b - 0.1)/se)^2 with b, se from P results.coef / se.classical */
        OK(weft_test_linear(m, one, 1, r_value, &w));
        NEAR(w.f, pow((0.115562156360552 - 0.1) / 0.00583570955722063, 2),
             "P results.coef.value and se.classical.value");
        EXPECT_ERROR(weft_test_linear(m, twice, 2, NULL, &w), WEFT_ECOMPUTE, "singular");
        EXPECT_ERROR(weft_test_linear(m, bad, 1, NULL, &w), WEFT_EINVAL, "not a finite number");
        EXPECT_ERROR(weft_test_linear(m, one, 1, r_bad, &w), WEFT_EINVAL, "value[0]");
        EXPECT_ERROR(weft_test_linear(m, one, 0, NULL, &w), WEFT_EINVAL, "q is 0");
        EXPECT_ERROR(weft_test_linear(m, NULL, 1, NULL, &w), WEFT_EINVAL, "restriction is NULL");
        EXPECT_ERROR(weft_test_linear(NULL, one, 1, NULL, &w), WEFT_EINVAL, "model is NULL");
        EXPECT_ERROR(weft_test_linear(m, one, 1, NULL, NULL), WEFT_EINVAL, "out is NULL");
    }

    /* Unit effects belong to within. */
    EXPECT_ERROR(weft_model_unit_effects(m, resid, unused, MAX_ROWS, &needed), WEFT_ECOMPUTE, "within only");
    CHECK(isnan(value_of(m, "theta", NULL)));

    /* Serial check on pooled: the level-error test applies to fd and within only. */
    OK(weft_test_serial(m, &sr));
    CHECK(isnan(sr.level_null) && isnan(sr.level_f) && isnan(sr.level_p));
    CHECK(sr.pairs == 190); /* D: 10 firms x 19 adjacent year pairs */
    EXPECT_ERROR(weft_test_serial(m, NULL), WEFT_EINVAL, "out is NULL");
    EXPECT_ERROR(weft_test_serial(NULL, &sr), WEFT_EINVAL, "model is NULL");
    weft_model_free(m);
}

static void test_pooled_robust(const grunfeld *g)
{
    static const char *const terms[] = {"intercept", "value", "capital"};
    static const double coef[] = {-42.7143694365594, 0.115562156360552, 0.23067848873197};
    /* P results.se.HC1, .HC3, .CR1, .CR1_period, .CR1_both, .DK */
    static const double hc1[] = {11.5747011170997, 0.00681095445687195, 0.0488655395343422};
    static const double hc3[] = {14.0134954665853, 0.00716266624438006, 0.0585098662053139};
    static const double cr1[] = {20.4252029284739, 0.0158943366870588, 0.08496711263554};
    static const double cr1p[] = {10.272890949869, 0.00790949349727884, 0.038672337482828};
    static const double cr1b[] = {19.5056077357391, 0.0163517539919942, 0.0784739139920783};
    static const double dk[] = {12.2950685079366, 0.0115228093983927, 0.0483755870185978};
    weft_panel *p = make_panel(g, 0, NULL, NULL);
    weft_model *m;
    weft_wald_result w;
    weft_summary_item item;

    m = fit_text(p, "pooled hc1");
    check_table(m, terms, coef, hc1, 3, "P results.se.HC1");
    weft_model_free(m);
    /* The joint test of all regressors under the model's covariance and df:
       P results.wald_subset.CR1 (R sandwich + lmtest), F on (2, G-1 = 9). */
    m = fit_text(p, "pooled cluster");
    NEAR(value_of(m, "f", NULL), 51.5906047816128, "P results.wald_subset.CR1.F");
    NEAR(value_of(m, "f-df2", NULL), 9, "P results.wald_subset.CR1.F_df_G_minus_1.df2");
    NEAR(value_of(m, "f-p", NULL), 1.17341263386786e-05, "P results.wald_subset.CR1.F_df_G_minus_1.p");
    CHECK(summary_find(m, "joint test of all regressors, df2", &item) > 0);
    CHECK(item.kind == WEFT_ITEM_NUMBER && item.number == 9.0);
    NEAR(value_of(m, "classical-f", NULL), 426.575731304813, "P results.f_all_terms.F (classical)");
    weft_model_free(m);
    m = fit_text(p, "hc3");
    check_table(m, terms, coef, hc3, 3, "P results.se.HC3");
    weft_model_free(m);

    m = fit_text(p, "pooled cluster");
    check_table(m, terms, coef, cr1, 3, "P results.se.CR1");
    NEAR(value_of(m, "df", NULL), 9, "P inference.CR1.df");
    NEAR(value_of(m, "clusters", NULL), 10, "P results.clusters.G");
    CHECK(summary_find(m, "clusters", &item) > 0 && item.number == 10.0);
    {
        /* P results.vcov.CR1 */
        static const double vcov[9] = {417.188914669338, 0.209618982371325, -1.21710416442753,
                                       0.209618982371325, 0.000252629938721582, -0.000650433854351843,
                                       -1.21710416442753, -0.000650433854351843, 0.00721941022962055};
        double got[9];
        size_t i, needed = 0;
        OK(weft_model_covariance(m, got, 9, &needed));
        for (i = 0; i < 9; ++i) NEAR(got[i], vcov[i], "P results.vcov.CR1");
    }
    OK(weft_test_joint_list(m, "value, capital", &w));
    NEAR(w.chi2, 103.181209563226, "P wald_subset.CR1.wald_chi2");
    NEAR(w.f, 51.5906047816128, "P wald_subset.CR1.F");
    CHECK(w.f_df2 == 9);
    NEAR(w.f_p, 1.17341263386786e-05, "P wald_subset.CR1.F_df_G_minus_1.p");
    weft_model_free(m);

    m = fit_text(p, "cluster-period");
    check_table(m, terms, coef, cr1p, 3, "P results.se.CR1_period");
    weft_model_free(m);
    m = fit_text(p, "cluster-both");
    check_table(m, terms, coef, cr1b, 3, "P results.se.CR1_both");
    weft_model_free(m);
    m = fit_text(p, "dk");
    check_table(m, terms, coef, dk, 3, "P results.se.DK (lag 2 = P clusters.DK_lag)");
    NEAR(value_of(m, "df", NULL), 19, "P inference.DK.df");
    weft_model_free(m);
    weft_panel_free(p);
}

static void test_fd_between(const grunfeld *g)
{
    static const char *const terms[] = {"intercept", "value", "capital"};
    /* F results.coef, results.se.classical */
    static const double fd_coef[] = {-1.81889015858514, 0.0897624949908166, 0.29176671969407};
    static const double fd_se[] = {3.56559313557045, 0.00836358501627507, 0.0537515976408947};
    /* B results.coef, results.se.classical */
    static const double b_coef[] = {-8.52711372172679, 0.134646086971912, 0.0320314743314095};
    static const double b_se[] = {47.515307735823, 0.028745459140487, 0.190937799167522};
    weft_panel *p = make_panel(g, 0, NULL, NULL);
    weft_model *m;
    weft_serial_result s;
    double resid[MAX_ROWS];
    unsigned char unused[MAX_ROWS];
    size_t i, n_unused = 0;

    m = fit_text(p, "fd");
    check_table(m, terms, fd_coef, fd_se, 3, "F results.coef / se.classical");
    NEAR(value_of(m, "r2", NULL), 0.408877350770655, "F results.r_squared");
    NEAR(value_of(m, "n", NULL), 190, "F sample.nobs");
    NEAR(value_of(m, "ssr", NULL), 345455.886220664, "F results.rss");
    /* fd's residual of a difference sits on the later row; the first year of each firm
     * has none (D: 10 firms). */
    OK(weft_model_residuals(m, resid, unused, MAX_ROWS, NULL));
    for (i = 0; i < g->n; ++i) n_unused += unused[i];
    CHECK(n_unused == 10 && unused[0] == 1 && isnan(resid[0]) && unused[1] == 0);
    /* F results.serial_ar1 */
    OK(weft_test_serial(m, &s));
    NEAR(s.slope, 0.133333670763177, "F serial_ar1.slope");
    NEAR(s.intercept, 0.197248171700576, "F serial_ar1.intercept");
    NEAR(s.se, 0.0786600853085909, "F serial_ar1.se_classical");
    NEAR(s.t, 1.69506135468957, "F serial_ar1.t_classical");
    NEAR(s.p, 0.0918123903917409, "F serial_ar1.p_classical");
    CHECK(s.df == 178 && s.pairs == 180 && s.units == 10);
    CHECK(s.level_null == -0.5);
    NEAR(s.level_se, 0.0347153108242718, "F serial_ar1.se_CR1");
    NEAR(s.level_f, 332.830439965723, "F level_errors_uncorrelated.F_CR1_df_G_minus_1.F");
    CHECK(s.level_df1 == 1 && s.level_df2 == 9);
    NEAR(s.level_p, 2.03917300917677e-08, "F level_errors_uncorrelated.F_CR1_df_G_minus_1.p");
    weft_model_free(m);

    m = fit_text(p, "between");
    check_table(m, terms, b_coef, b_se, 3, "B results.coef / se.classical");
    NEAR(value_of(m, "r2", NULL), 0.857768226360901, "B results.r_squared");
    NEAR(value_of(m, "sigma", NULL), 85.0236614763616, "B results.sigma");
    NEAR(value_of(m, "n", NULL), 10, "B sample.nobs");
    /* A serial check needs periods within units: between has one row per unit. */
    EXPECT_ERROR(weft_test_serial(m, &s), WEFT_ECOMPUTE, "between");
    weft_model_free(m);
    weft_panel_free(p);
}

static void test_within_random(const grunfeld *g)
{
    static const char *const slopes[] = {"value", "capital"};
    /* R within.coef.*, within.se.classical.*, within.se.CR1.* */
    static const double w_coef[] = {0.110123804120718, 0.310065341300139};
    static const double w_se[] = {0.0118566942140438, 0.0173545027755526};
    static const double w_cr1[] = {0.0151560754389038, 0.0526183915914517};
    weft_panel *p = make_panel(g, 0, NULL, NULL);
    weft_model *m;
    weft_serial_result s;
    weft_hausman_result h;
    weft_effects_result e;
    weft_options o = WEFT_OPTIONS_INIT;
    weft_summary_item item;

    m = fit_text(p, "within");
    check_table(m, slopes, w_coef, w_se, 2, "R within.coef / within.se.classical");
    CHECK(term_index(m, "intercept") == (size_t)-1);
    NEAR(value_of(m, "corr2-deviations", NULL), 0.76675758374814, "R within.r2");
    CHECK(summary_find(m, "squared correlation of outcome and slope prediction, deviations from unit means",
                       &item) > 0);
    NEAR(item.number, 0.76675758374814, "R within.r2");
    OK(weft_test_serial(m, &s));
    NEAR(s.slope, 0.665620467598169, "R within_serial.slope");
    NEAR(s.se, 0.0633792196933986, "R within_serial.se");
    CHECK(s.pairs == 190);
    NEAR(s.level_null, -0.0526315789473684, "R within_serial.level_null");
    NEAR(s.level_se, 0.0865493453597996, "R within_serial.level_se");
    NEAR(s.level_f, 68.8693794229384, "R within_serial.level_f");
    NEAR(s.level_p, 1.64949660179742e-05, "R within_serial.level_p");
    weft_model_free(m);

    {
        /* R within.unit_effect.firm1 / firm10 (plm fixef); D: rows 0-19 are firm 1,
         * rows 180-199 firm 10. */
        double effect[MAX_ROWS];
        unsigned char unused[MAX_ROWS];
        size_t needed = 0;
        m = fit_text(p, "within");
        OK(weft_model_unit_effects(m, NULL, NULL, 0, &needed));
        CHECK(needed == 200);
        OK(weft_model_unit_effects(m, effect, unused, MAX_ROWS, &needed));
        CHECK(g->firm[0] == 1 && g->firm[19] == 1 && g->firm[180] == 10 && g->firm[199] == 10);
        NEAR(effect[0], -70.2967174555104, "R within.unit_effect.firm1");
        NEAR(effect[19], -70.2967174555104, "R within.unit_effect.firm1");
        NEAR(effect[199], -6.56784353738025, "R within.unit_effect.firm10");
        CHECK(unused[0] == 0 && unused[199] == 0);
        EXPECT_ERROR(weft_model_unit_effects(m, effect, unused, 10, &needed), WEFT_EBUFFER, "200");
        EXPECT_ERROR(weft_model_unit_effects(NULL, effect, unused, MAX_ROWS, &needed), WEFT_EINVAL, "model is NULL");
        weft_model_free(m);
    }

    m = fit_text(p, "within cluster");
    check_table(m, slopes, w_coef, w_cr1, 2, "R within.se.CR1 (plm sss)");
    weft_model_free(m);

    m = fit_text(p, "random");
    {
        static const char *const terms[] = {"intercept", "value", "capital"};
        /* R random.coef.*; classical se of value from R random.se.classical.value */
        static const double coef[] = {-57.8344149050329, 0.109781152232484, 0.308112982830713};
        size_t i;
        for (i = 0; i < 3; ++i) NEAR(value_of(m, "estimate", terms[i]), coef[i], "R random.coef");
        NEAR(value_of(m, "se", "value"), 0.0104926635495465, "R random.se.classical.value");
    }
    CHECK(summary_find(m, "estimator", &item) == 0 && strstr(item.text, "random") != NULL);
    NEAR(value_of(m, "sigma2-idiosyncratic", NULL), 2784.45823077794, "R random.sigma2_idios");
    NEAR(value_of(m, "sigma2-unit", NULL), 7089.80009930804, "R random.sigma2_id");
    NEAR(value_of(m, "theta", NULL), 0.861223620747879, "R random.theta");
    weft_model_free(m);

    /* Hausman: R hausman.* and hausman_robust.* */
    OK(weft_test_hausman(p, NULL, &h));
    NEAR(h.statistic, 2.33036689367546, "R hausman.statistic");
    CHECK(h.df == 2 && h.rank == 2 && h.positive_definite == 1);
    NEAR(h.p, 0.311865446054886, "R hausman.p");
    NEAR(h.robust.chi2, 7.31970515703912, "R hausman_robust.chi2");
    NEAR(h.robust.chi2_p, 0.0257363065311188, "R hausman_robust.chi2_p");
    NEAR(h.robust.f, 3.65985257851956, "R hausman_robust.f");
    CHECK(h.robust.f_df1 == 2 && h.robust.f_df2 == 9);
    NEAR(h.robust.f_p, 0.0686887962322035, "R hausman_robust.f_p");
    /* The estimator and se of the options are ignored. */
    o.estimator = WEFT_FD;
    o.se = WEFT_SE_HC1;
    OK(weft_test_hausman(p, &o, &h));
    NEAR(h.statistic, 2.33036689367546, "R hausman.statistic");
    EXPECT_ERROR(weft_test_hausman(NULL, NULL, &h), WEFT_EINVAL, "panel is NULL");
    EXPECT_ERROR(weft_test_hausman(p, NULL, NULL), WEFT_EINVAL, "out is NULL");

    /* Unit effects F: R effects.* (plm::pFtest) */
    OK(weft_test_effects(p, NULL, &e));
    NEAR(e.f, 49.1766254994185, "R effects.F");
    CHECK(e.df1 == 9 && e.df2 == 188);
    NEAR(e.p, 8.70014669955366e-45, "R effects.p");
    NEAR(e.ssr_pooled, 1755850.48408991, "P results.rss (the pooled comparator)");
    OK(weft_test_effects(p, &o, &e));
    NEAR(e.f, 49.1766254994185, "R effects.F");
    EXPECT_ERROR(weft_test_effects(NULL, NULL, &e), WEFT_EINVAL, "panel is NULL");
    EXPECT_ERROR(weft_test_effects(p, NULL, NULL), WEFT_EINVAL, "out is NULL");
    o.version = 99;
    EXPECT_ERROR(weft_test_effects(p, &o, &e), WEFT_EINVAL, "options.version is 99");
    weft_panel_free(p);

    /* A panel without an outcome cannot be compared. */
    OK(weft_panel_new(&p, g->n, 1));
    OK(weft_panel_set_units_number(p, g->firm, NULL));
    OK(weft_panel_set_periods(p, g->year, NULL));
    EXPECT_ERROR(weft_test_hausman(p, NULL, &h), WEFT_EINVAL, "no outcome");
    EXPECT_ERROR(weft_test_effects(p, NULL, &e), WEFT_EINVAL, "no outcome");
    weft_panel_free(p);
}

static void test_units_masks_and_rows(const grunfeld *g)
{
    weft_panel *p;
    weft_model *m = NULL;
    double inv[MAX_ROWS], resid[MAX_ROWS];
    unsigned char mask[MAX_ROWS], unused[MAX_ROWS];
    weft_summary_item item;

    /* Text unit ids give the same model as numbers: P results.coef.capital. */
    p = make_panel(g, 1, NULL, NULL);
    m = fit_text(p, "pooled cluster");
    NEAR(value_of(m, "estimate", "capital"), 0.23067848873197, "P results.coef.capital");
    NEAR(value_of(m, "se", "capital"), 0.08496711263554, "P results.se.CR1.capital");
    weft_model_free(m);
    weft_panel_free(p);

    /* A row marked missing is dropped and counted; its residual is blank. */
    memset(mask, 0, sizeof mask);
    mask[5] = 1;
    p = make_panel(g, 0, NULL, mask);
    m = fit_text(p, "pooled");
    CHECK(value_of(m, "rows-dropped", NULL) == 1.0 && value_of(m, "n", NULL) == 199.0);
    CHECK(summary_find(m, "rows dropped", &item) > 0 && item.number == 1.0);
    OK(weft_model_residuals(m, resid, unused, MAX_ROWS, NULL));
    CHECK(unused[5] == 1 && isnan(resid[5]) && unused[4] == 0 && !isnan(resid[4]));
    weft_model_free(m);
    weft_panel_free(p);

    /* A NaN that is not marked missing is refused, naming the sheet row: position 5
     * with first row 2 is row 7. */
    memcpy(inv, g->inv, sizeof inv);
    inv[5] = NAN;
    p = make_panel(g, 0, inv, NULL);
    m = (weft_model *)&m;
    EXPECT_ERROR(weft_model_new_text(&m, p, "pooled"), WEFT_EDATA, "row 7");
    CHECK(m == NULL);
    weft_panel_free(p);
    /* Infinity likewise. */
    inv[5] = HUGE_VAL;
    p = make_panel(g, 0, inv, NULL);
    EXPECT_ERROR(weft_model_new_text(&m, p, "pooled"), WEFT_EDATA, "row 7");
    weft_panel_free(p);
    /* Marked missing, the same NaN is a blank. */
    p = make_panel(g, 0, inv, mask);
    m = fit_text(p, "pooled");
    CHECK(value_of(m, "n", NULL) == 199.0);
    weft_model_free(m);
    weft_panel_free(p);

    /* Blank (empty) and NULL text unit ids are missing. */
    {
        static char storage[MAX_ROWS][16];
        const char *ids[MAX_ROWS];
        size_t i;
        for (i = 0; i < g->n; ++i) {
            sprintf(storage[i], "%d", (int)g->firm[i]);
            ids[i] = storage[i];
        }
        ids[3] = "";
        ids[4] = NULL;
        OK(weft_panel_new(&p, g->n, 2));
        OK(weft_panel_set_units_text(p, ids, NULL));
        OK(weft_panel_set_periods(p, g->year, NULL));
        OK(weft_panel_set_outcome(p, "inv", g->inv, NULL));
        OK(weft_panel_add_regressor(p, "value", g->value, NULL));
        m = fit_text(p, "pooled");
        CHECK(value_of(m, "rows-dropped", NULL) == 2.0);
        weft_model_free(m);
        weft_panel_free(p);
    }
}

static void test_model_misuse(const grunfeld *g)
{
    weft_panel *p = make_panel(g, 0, NULL, NULL);
    weft_model *m = (weft_model *)&m;
    weft_options o = WEFT_OPTIONS_INIT;
    size_t n;
    const char *s;
    weft_summary_item item;
    weft_serial_result sr;
    weft_hetero_result h;
    weft_wald_result w;
    double buf[4];

    EXPECT_ERROR(weft_model_new(NULL, p, NULL), WEFT_EINVAL, "out is NULL");
    EXPECT_ERROR(weft_model_new(&m, NULL, NULL), WEFT_EINVAL, "panel is NULL");
    CHECK(m == NULL);
    EXPECT_ERROR(weft_model_new_text(NULL, p, "fd"), WEFT_EINVAL, "out is NULL");
    EXPECT_ERROR(weft_model_new_text(&m, NULL, "fd"), WEFT_EINVAL, "panel is NULL");
    EXPECT_ERROR(weft_model_new_text(&m, p, "fd pooled"), WEFT_EMODEL, "pooled");
    EXPECT_ERROR(weft_model_new_text(&m, p, "within cluster sandwich"), WEFT_EMODEL, "sandwich");
    CHECK(m == NULL);

    o.version = 2;
    EXPECT_ERROR(weft_model_new(&m, p, &o), WEFT_EINVAL, "options.version is 2");
    o.version = 0;
    EXPECT_ERROR(weft_model_new(&m, p, &o), WEFT_EINVAL, "options.version is 0");
    o.version = WEFT_OPTIONS_VERSION;
    o.size = 8;
    EXPECT_ERROR(weft_model_new(&m, p, &o), WEFT_EINVAL, "options.size is 8");
    o.size = sizeof o;
    o.estimator = 42;
    EXPECT_ERROR(weft_model_new(&m, p, &o), WEFT_EINVAL, "estimator is 42");
    o.estimator = WEFT_POOLED;
    o.se = -3;
    EXPECT_ERROR(weft_model_new(&m, p, &o), WEFT_EINVAL, "se is -3");
    o.se = WEFT_SE_DK;
    o.dk_lag = -2;
    EXPECT_ERROR(weft_model_new(&m, p, &o), WEFT_EMODEL, "dk_lag is -2");
    o.dk_lag = 1;
    o.level = 1.5;
    EXPECT_ERROR(weft_model_new(&m, p, &o), WEFT_EMODEL, "level is 1.5");
    o.level = NAN;
    EXPECT_ERROR(weft_model_new(&m, p, &o), WEFT_EMODEL, "level");
    CHECK(m == NULL);
    /* A caller whose options struct is shorter than ours (an older header) and a NULL
     * options pointer both get the defaults for what they do not pass. */
    OK(weft_model_new(&m, p, NULL));
    weft_model_free(m);

    /* Every model getter refuses a NULL model with a message naming it. */
    EXPECT_ERROR(weft_model_options(NULL, &o), WEFT_EINVAL, "model is NULL");
    EXPECT_ERROR(weft_model_term_count(NULL, &n), WEFT_EINVAL, "model is NULL");
    EXPECT_ERROR(weft_model_term_name(NULL, 0, &s), WEFT_EINVAL, "model is NULL");
    EXPECT_ERROR(weft_model_coefficients(NULL, buf, 4, &n), WEFT_EINVAL, "model is NULL");
    EXPECT_ERROR(weft_model_dropped_count(NULL, &n), WEFT_EINVAL, "model is NULL");
    EXPECT_ERROR(weft_model_dropped(NULL, 0, &s, &s), WEFT_EINVAL, "model is NULL");
    EXPECT_ERROR(weft_model_warning_count(NULL, &n), WEFT_EINVAL, "model is NULL");
    EXPECT_ERROR(weft_model_warning(NULL, 0, &s), WEFT_EINVAL, "model is NULL");
    EXPECT_ERROR(weft_model_summary_item(NULL, 0, &item), WEFT_EINVAL, "model is NULL");
    EXPECT_ERROR(weft_test_serial(NULL, &sr), WEFT_EINVAL, "model is NULL");
    EXPECT_ERROR(weft_test_hetero(NULL, 0, &h), WEFT_EINVAL, "model is NULL");
    EXPECT_ERROR(weft_test_joint_list(NULL, "value", &w), WEFT_EINVAL, "model is NULL");
    weft_model_free(NULL); /* a no-op */

    /* A term that is a copy of another is dropped, named, and never given a number. */
    OK(weft_panel_add_regressor(p, "value_again", g->value, NULL));
    m = fit_text(p, "pooled");
    OK(weft_model_dropped_count(m, &n));
    CHECK(n == 1);
    {
        const char *term = NULL, *reason = NULL;
        double v;
        OK(weft_model_dropped(m, 0, &term, &reason));
        CHECK(term != NULL && strcmp(term, "value_again") == 0 && reason != NULL && reason[0] != '\0');
        OK(weft_model_dropped(m, 0, NULL, NULL));
        CHECK(term_index(m, "value_again") == (size_t)-1);
        EXPECT_ERROR(weft_model_value(m, "estimate", "value_again", &v), WEFT_ERANGE, "dropped");
        EXPECT_ERROR(weft_test_joint_list(m, "value_again", &w), WEFT_ERANGE, "dropped");
        CHECK(summary_find(m, "term dropped", &item) > 0 && item.kind == WEFT_ITEM_TEXT);
    }
    /* Same slopes as without the copy: P results.coef.value */
    NEAR(value_of(m, "estimate", "value"), 0.115562156360552, "P results.coef.value");
    weft_model_free(m);

    /* white-full with a 0/1 regressor: its square is itself, so that auxiliary column
     * is dropped as collinear and the test says so (CONVENTIONS.md white-full). */
    {
        double later[MAX_ROWS];
        weft_panel *q = make_panel(g, 0, NULL, NULL);
        weft_hetero_result h;
        size_t i;
        for (i = 0; i < g->n; ++i) later[i] = g->year[i] >= 1945 ? 1.0 : 0.0;
        OK(weft_panel_add_regressor(q, "later", later, NULL));
        m = fit_text(q, "pooled");
        OK(weft_test_hetero(m, WEFT_HETERO_WHITE_FULL, &h));
        CHECK(strstr(weft_test_warnings(), "collinear") != NULL);
        OK(weft_test_hetero(m, WEFT_HETERO_KOENKER, &h));
        CHECK(strcmp(weft_test_warnings(), "") == 0);
        weft_model_free(m);
        weft_panel_free(q);
    }

    /* within with hc standard errors warns (CONVENTIONS.md, Stock & Watson 2008). */
    m = fit_text(p, "within hc1");
    OK(weft_model_warning_count(m, &n));
    CHECK(n >= 1);
    OK(weft_model_warning(m, 0, &s));
    CHECK(s != NULL && strstr(s, "cluster") != NULL);
    CHECK(summary_find(m, "warning", &item) > 0 && s != NULL && strcmp(item.text, s) == 0);
    EXPECT_ERROR(weft_model_warning(m, n, &s), WEFT_ERANGE, "past the last warning");
    EXPECT_ERROR(weft_model_warning(m, 0, NULL), WEFT_EINVAL, "text is NULL");
    weft_model_free(m);
    weft_panel_free(p);
}

/* Unit ids borrowed in place (weft_panel_borrow_units_*): numbers, and text as one
 * buffer of bytes with offsets ("firm 1", ..., no NUL between them). The same fits as
 * the copied ids, bit for bit, and the pooled reference values; a model made from
 * the panel keeps reading them after the panel is freed. */
static void test_borrowed_units(const grunfeld *g)
{
    static char bytes[MAX_ROWS * 16];
    static size_t offsets[MAX_ROWS + 1];
    const char *const texts[] = {"pooled cluster", "fd dk", "within cluster", "random hc1"};
    double table[3 * WEFT_COEF_COLUMNS], table_c[3 * WEFT_COEF_COLUMNS];
    size_t i, t, at = 0;
    int kind;
    weft_panel *p, *copied;
    weft_model *m, *mc;

    for (i = 0; i < g->n; ++i) {
        offsets[i] = at;
        at += (size_t)sprintf(bytes + at, "firm %d", (int)g->firm[i]);
    }
    offsets[g->n] = at;
    for (kind = 0; kind < 2; ++kind) {
        OK(weft_panel_new(&p, g->n, 2));
        if (kind == 0) OK(weft_panel_borrow_units_number(p, g->firm, NULL));
        else OK(weft_panel_borrow_units_text(p, bytes, offsets, NULL));
        OK(weft_panel_borrow_periods(p, g->year, NULL));
        OK(weft_panel_borrow_outcome(p, "inv", g->inv, NULL));
        OK(weft_panel_borrow_regressor(p, "value", g->value, NULL));
        OK(weft_panel_borrow_regressor(p, "capital", g->capital, NULL));
        copied = make_panel(g, kind, NULL, NULL);
        for (t = 0; t < sizeof texts / sizeof texts[0]; ++t) {
            m = fit_text(p, texts[t]);
            mc = fit_text(copied, texts[t]);
            OK(weft_model_coefficients(m, table, 3 * WEFT_COEF_COLUMNS, NULL));
            OK(weft_model_coefficients(mc, table_c, 3 * WEFT_COEF_COLUMNS, NULL));
            for (i = 0; i < 2 * WEFT_COEF_COLUMNS; ++i)
                CHECK(table[i] == table_c[i] || (isnan(table[i]) && isnan(table_c[i])));
            weft_model_free(m);
            weft_model_free(mc);
        }
        weft_panel_free(copied);
        m = fit_text(p, "pooled cluster");
        weft_panel_free(p); /* the model keeps reading the borrowed ids */
        NEAR(value_of(m, "estimate", "capital"), 0.23067848873197, "P results.coef.capital");
        NEAR(value_of(m, "se", "capital"), 0.08496711263554, "P results.se.CR1.capital");
        weft_model_free(m);
    }
    OK(weft_panel_new(&p, g->n, 2));
    EXPECT_ERROR(weft_panel_borrow_units_text(p, bytes, NULL, NULL), WEFT_EINVAL, "offsets is NULL");
    EXPECT_ERROR(weft_panel_borrow_units_number(p, NULL, NULL), WEFT_EINVAL, "ids is NULL");
    offsets[3] = offsets[2] - 1;
    EXPECT_ERROR(weft_panel_borrow_units_text(p, bytes, offsets, NULL), WEFT_EDATA, "offsets[3] is smaller");
    offsets[3] = offsets[4];   /* row 2's id runs into row 3's; row 3's is empty: missing */
    OK(weft_panel_borrow_units_text(p, bytes, offsets, NULL));
    EXPECT_ERROR(weft_panel_borrow_units_number(p, g->firm, NULL), WEFT_EINVAL, "already set");
    weft_panel_free(p);
}

/* The Grunfeld panel with periods, outcome and regressors borrowed in place. */
static weft_panel *make_borrowed_panel(const grunfeld *g, const unsigned char *inv_missing)
{
    weft_panel *p = NULL;
    OK(weft_panel_new(&p, g->n, 2));
    if (p == NULL) return NULL;
    OK(weft_panel_set_units_number(p, g->firm, NULL));
    OK(weft_panel_borrow_periods(p, g->year, NULL));
    OK(weft_panel_borrow_outcome(p, "inv", g->inv, inv_missing));
    OK(weft_panel_borrow_regressor(p, "value", g->value, NULL));
    OK(weft_panel_borrow_regressor(p, "capital", g->capital, NULL));
    return p;
}

/* Borrowed columns (weft_panel_borrow_*): read in place, the same results as copied
 * columns, and still read by a model after its panel is freed (a refitting test). */
static void test_borrowed(const grunfeld *g)
{
    weft_panel *p, *copied;
    weft_model *m, *mc;
    weft_hetero_result h, hc;
    double table[3 * WEFT_COEF_COLUMNS], table_c[3 * WEFT_COEF_COLUMNS];
    unsigned char mask[MAX_ROWS];
    const char *const texts[] = {"pooled cluster", "fd cluster", "within cluster", "pooled hc1"};
    size_t t, i;

    memset(mask, 0, sizeof mask);
    mask[7] = 1;
    p = make_borrowed_panel(g, mask);
    EXPECT_ERROR(weft_panel_borrow_outcome(p, "inv", g->inv, NULL), WEFT_EINVAL, "already set");
    EXPECT_ERROR(weft_panel_borrow_regressor(p, "x", NULL, NULL), WEFT_EINVAL, "values is NULL");
    EXPECT_ERROR(weft_panel_borrow_periods(p, g->year, NULL), WEFT_EINVAL, "periods");
    EXPECT_ERROR(weft_panel_borrow_periods(NULL, g->year, NULL), WEFT_EINVAL, "panel is NULL");
    copied = make_panel(g, 0, NULL, mask);
    for (t = 0; t < sizeof texts / sizeof texts[0]; ++t) {
        m = fit_text(p, texts[t]);
        mc = fit_text(copied, texts[t]);
        OK(weft_model_coefficients(m, table, 3 * WEFT_COEF_COLUMNS, NULL));
        OK(weft_model_coefficients(mc, table_c, 3 * WEFT_COEF_COLUMNS, NULL));
        for (i = 0; i < 2 * WEFT_COEF_COLUMNS; ++i) CHECK(table[i] == table_c[i] || (isnan(table[i]) && isnan(table_c[i])));
        weft_model_free(m);
        weft_model_free(mc);
    }
    weft_panel_free(copied);
    /* Without the masked row the pooled model is the reference's: P results.coef.capital. */
    weft_panel_free(p);
    p = make_borrowed_panel(g, NULL);
    m = fit_text(p, "pooled cluster");
    weft_panel_free(p); /* the model keeps reading the borrowed arrays */
    NEAR(value_of(m, "estimate", "capital"), 0.23067848873197, "P results.coef.capital");
    NEAR(value_of(m, "se", "capital"), 0.08496711263554, "P results.se.CR1.capital");
    OK(weft_test_hetero(m, WEFT_HETERO_KOENKER, &h));
    NEAR(h.lm, 55.2470842121668, "P heteroskedasticity.koenker_LM.stat");
    copied = make_panel(g, 0, NULL, NULL);
    mc = fit_text(copied, "pooled cluster");
    OK(weft_test_hetero(mc, WEFT_HETERO_KOENKER, &hc));
    CHECK(h.lm == hc.lm && h.f == hc.f);
    weft_model_free(mc);
    weft_panel_free(copied);
    weft_model_free(m);
}

/* The wild cluster bootstrap on Grunfeld (10 firms: all 1024 sign patterns are
 * enumerated, so there is no randomness). Source of the p-values: the R enumeration
 * of tests/bootstrap/boot_support.hpp (base lm, sandwich::vcovCL HC1, every sign
 * vector) run on grunfeld.csv with x1 = value: counts 4, 196 and 802 of 1024 at
 * tested values 0, 0.1 and 0.12. */
static void test_bootstrap(const grunfeld *g)
{
    weft_panel *p = make_panel(g, 0, NULL, NULL);
    weft_model *m = fit_text(p, "pooled cluster"); /* a lean fit: refitted in full once */
    weft_bootstrap_result b, b2;
    OK(weft_test_bootstrap(m, "value", NULL, &b));
    CHECK(b.p == 4.0 / 1024.0);
    CHECK(b.draws == 1024.0 && b.enumerated == 1 && b.weights == WEFT_BOOT_RADEMACHER);
    CHECK(b.clusters == 10.0 && b.by_period == 0 && b.null_value == 0.0 && b.level == 0.95);
    CHECK(b.ci_low < b.estimate && b.estimate < b.ci_high);
    NEAR(b.estimate, value_of(m, "estimate", "value"), "the model's own estimate");
    NEAR(fabs(b.t), fabs(value_of(m, "t", "value")), "the model's CR1 t (same clusters)");
    OK(weft_test_bootstrap(m, "value", "null=0.1", &b));
    CHECK(b.p == 196.0 / 1024.0);
    OK(weft_test_bootstrap(m, "value", "null=0.12, draws=5000", &b));
    CHECK(b.p == 802.0 / 1024.0);
    OK(weft_test_bootstrap(m, "value", "webb draws=999 seed=3", &b));
    OK(weft_test_bootstrap(m, "value", "seed=3 draws=999 webb", &b2));
    CHECK(b.weights == WEFT_BOOT_WEBB && b.enumerated == 0 && b.draws == 999.0);
    CHECK(b.p == b2.p && b.ci_low == b2.ci_low && b.ci_high == b2.ci_high);
    EXPECT_ERROR(weft_test_bootstrap(m, "value", "draws=ten", &b), WEFT_EMODEL, "draws=ten");
    CHECK(isnan(b.p));
    EXPECT_ERROR(weft_test_bootstrap(m, "value", "webb rademacher", &b), WEFT_EMODEL, "conflicts");
    EXPECT_ERROR(weft_test_bootstrap(m, "labour", NULL, &b), WEFT_ERANGE, "labour");
    EXPECT_ERROR(weft_test_bootstrap(NULL, "value", NULL, &b), WEFT_EINVAL, "model is NULL");
    EXPECT_ERROR(weft_test_bootstrap(m, NULL, NULL, &b), WEFT_EINVAL, "term is NULL");
    EXPECT_ERROR(weft_test_bootstrap(m, "value", NULL, NULL), WEFT_EINVAL, "out is NULL");
    weft_model_free(m);
    m = fit_text(p, "pooled cluster-both");
    EXPECT_ERROR(weft_test_bootstrap(m, "value", NULL, &b), WEFT_ECOMPUTE, "one dimension");
    weft_model_free(m);
    weft_panel_free(p);
}

/* cr2 on Grunfeld within: tests/data/panel/cr2_reference.json "grunfeld_within"
 * (clubSandwich 0.5.8 coef_test CR2 Satterthwaite and Wald_test HTZ on the plm fit). */
static void test_cr2(const grunfeld *g)
{
    static const double se[] = {0.0206311068339026, 0.0826753020489797};
    static const double df[] = {1.81256840291113, 1.79953119283768};
    weft_panel *p = make_panel(g, 0, NULL, NULL);
    weft_model *m = fit_text(p, "within cr2");
    weft_wald_result w;
    weft_summary_item item;
    double buf[2], small[1];
    size_t needed = 0, i;
    double table[2 * WEFT_COEF_COLUMNS];
    OK(weft_model_coefficients(m, table, 2 * WEFT_COEF_COLUMNS, &needed));
    OK(weft_model_term_df(m, NULL, 0, &needed));
    CHECK(needed == 2);
    EXPECT_ERROR(weft_model_term_df(m, small, 1, &needed), WEFT_EBUFFER, "2");
    EXPECT_ERROR(weft_model_term_df(NULL, buf, 2, &needed), WEFT_EINVAL, "model");
    OK(weft_model_term_df(m, buf, 2, &needed));
    for (i = 0; i < 2; ++i) {
        NEAR_TOL(table[i * WEFT_COEF_COLUMNS + WEFT_COEF_SE], se[i], 1e-8, "cr2_reference grunfeld_within.se");
        NEAR_TOL(buf[i], df[i], 1e-8, "cr2_reference grunfeld_within.df");
    }
    NEAR_TOL(value_of(m, "df", "capital"), df[1], 1e-8, "cr2_reference grunfeld_within.df[capital]");
    NEAR_TOL(value_of(m, "p", "value"), 0.0410217892800318, 1e-8, "cr2_reference grunfeld_within.p[value]");
    CHECK(summary_find(m, "clusters", &item) > 0 && item.number == 10.0);
    OK(weft_test_joint_list(m, "value, capital", &w));
    NEAR_TOL(w.f, 6.42900221599661, 1e-8, "cr2_reference grunfeld_within.joint.F (HTZ)");
    NEAR_TOL(w.f_df2, 0.782981670219427, 1e-8, "cr2_reference grunfeld_within.joint.df2");
    NEAR_TOL(w.f_p, 0.326680345674805, 1e-8, "cr2_reference grunfeld_within.joint.p");
    NEAR_TOL(w.chi2, 29.2798504611472, 1e-8, "cr2_reference grunfeld_within.joint.chi2");
    weft_model_free(m);
    /* other covariances: the model's one df for every term */
    m = fit_text(p, "within cluster");
    OK(weft_model_term_df(m, buf, 2, &needed));
    CHECK(buf[0] == 9.0 && buf[1] == 9.0);
    weft_model_free(m);
    weft_panel_free(p);
}

/* ---------------------------------------------------------------- weights */

/* The weight column w of grunfeld_weighted.csv (beside grunfeld.csv: the same rows). */
static int read_weights(const char *grunfeld_path, double *w)
{
    char path[1024], line[256];
    const char *slash = strrchr(grunfeld_path, '/');
    size_t dir = slash ? (size_t)(slash - grunfeld_path) + 1 : 0, n = 0;
    FILE *f;
    if (dir + 40 > sizeof path) return 0;
    memcpy(path, grunfeld_path, dir);
    strcpy(path + dir, "grunfeld_weighted.csv");
    f = fopen(path, "r");
    if (f == NULL) return 0;
    if (fgets(line, sizeof line, f) == NULL) { fclose(f); return 0; }
    while (n < MAX_ROWS && fgets(line, sizeof line, f) != NULL) {
        double a, b, c, d, e;
        if (sscanf(line, "%lf,%lf,%lf,%lf,%lf,%lf", &a, &b, &c, &d, &e, &w[n]) == 6) ++n;
    }
    fclose(f);
    return n == MAX_ROWS;
}

/* Weights on the panel (copied and borrowed) and by the model word. Expected values:
 * tests/data/panel/weights_reference.json (R lm(weights = ) with sandwich 3.0.2). */
static void test_weights(const grunfeld *g, const char *grunfeld_path)
{
    static const double pooled_se[] = {13.2422506195759, 0.00874714940581639, 0.055007317084256};
    static const double within_se[] = {0.0173401463384039, 0.056109605975211};
    static double w[MAX_ROWS], bad[MAX_ROWS];
    double table[3 * WEFT_COEF_COLUMNS];
    size_t needed = 0, i;
    weft_summary_item item;
    weft_panel *p, *q, *r;
    weft_model *m;
    CHECK(read_weights(grunfeld_path, w));
    p = make_panel(g, 0, NULL, NULL);
    OK(weft_panel_set_weights(p, "w", w, NULL));
    EXPECT_ERROR(weft_panel_set_weights(p, "w", w, NULL), WEFT_EINVAL, "already set");
    EXPECT_ERROR(weft_panel_borrow_weights(p, "w", NULL, NULL), WEFT_EINVAL, "values");
    m = fit_text(p, "pooled hc1");
    OK(weft_model_coefficients(m, table, 3 * WEFT_COEF_COLUMNS, &needed));
    for (i = 0; i < 3; ++i)
        NEAR_TOL(table[i * WEFT_COEF_COLUMNS + WEFT_COEF_SE], pooled_se[i], 1e-9, "weights_reference pooled.hc1.se");
    NEAR_TOL(value_of(m, "estimate", "value"), 0.116314750309544, 1e-9, "weights_reference pooled.estimate[value]");
    CHECK(summary_find(m, "rows with weight 0", &item) > 0 && item.number == 2.0);
    CHECK(value_of(m, "n", NULL) == 198.0);
    /* taken by the streaming route, still reported as weighted */
    CHECK(value_of(m, "weighted", NULL) == 1.0);
    weft_model_free(m);
    /* both ways at once is refused; random refuses weights */
    EXPECT_ERROR(weft_model_new_text(&m, p, "pooled weights=capital"), WEFT_EDATA, "not both");
    EXPECT_ERROR(weft_model_new_text(&m, p, "random"), WEFT_EDATA, "within with weights");
    weft_panel_free(p);
    /* borrowed, within cluster */
    q = make_panel(g, 0, NULL, NULL);
    OK(weft_panel_borrow_weights(q, NULL, w, NULL));
    m = fit_text(q, "within cluster");
    OK(weft_model_coefficients(m, table, 2 * WEFT_COEF_COLUMNS, &needed));
    for (i = 0; i < 2; ++i)
        NEAR_TOL(table[i * WEFT_COEF_COLUMNS + WEFT_COEF_SE], within_se[i], 1e-9, "weights_reference within.cluster.se");
    weft_model_free(m);
    weft_panel_free(q);
    /* the model word: the regressor column w */
    r = make_panel(g, 0, NULL, NULL);
    OK(weft_panel_add_regressor(r, "w", w, NULL));
    m = fit_text(r, "within cluster weights=w");
    OK(weft_model_coefficients(m, table, 2 * WEFT_COEF_COLUMNS, &needed));
    for (i = 0; i < 2; ++i)
        NEAR_TOL(table[i * WEFT_COEF_COLUMNS + WEFT_COEF_SE], within_se[i], 1e-9, "weights_reference within.cluster.se");
    weft_model_free(m);
    weft_panel_free(r);
    /* a negative weight names its row (sheet row 6: data from row 2) */
    memcpy(bad, w, sizeof bad);
    bad[4] = -1.0;
    p = make_panel(g, 0, NULL, NULL);
    OK(weft_panel_set_weights(p, "pop", bad, NULL));
    EXPECT_ERROR(weft_model_new_text(&m, p, "pooled"), WEFT_EDATA, "weights \"pop\", row 6");
    weft_panel_free(p);
}

/* ---------------------------------------------------------------- event studies */

/* Five units over 2000 and 2001, units 1 and 2 treated in 2001. Expected values by
 * hand from the 2x2 identity (CONVENTIONS.md, group-time with one cell): changes of
 * the treated 3 and 5 (mean 4), of the comparison units 1, 2, 0 (mean 1); effect 4 - 1
 * = 3; standard error sqrt(s_T^2/n_T + s_C^2/n_C) with n denominators =
 * sqrt(1/2 + (2/3)/3) = sqrt(0.72222...). */
static void test_event(void)
{
    const double unit[10] = {1, 1, 2, 2, 3, 3, 4, 4, 5, 5};
    const double year[10] = {2000, 2001, 2000, 2001, 2000, 2001, 2000, 2001, 2000, 2001};
    const double y[10] = {1, 4, 2, 7, 1, 2, 3, 5, 2, 2};
    double treat[10] = {0, 1, 0, 1, 0, 0, 0, 0, 0, 0};
    double table[2 * WEFT_EVENT_COLUMNS];
    size_t needed = 0, rows = 0, n_items = 0, n_warnings = 0, k;
    int reference = -1, found = 0;
    weft_summary_item item;
    const char *text = NULL;
    weft_event *e = NULL;
    weft_panel *p = NULL;
    OK(weft_panel_new(&p, 10, 2));
    OK(weft_panel_set_units_number(p, unit, NULL));
    OK(weft_panel_set_periods(p, year, NULL));
    OK(weft_panel_set_outcome(p, "sales", y, NULL));
    OK(weft_event_new(&e, p, treat, NULL, "group-time"));
    OK(weft_event_row_count(e, &rows));
    CHECK(rows == 2);
    OK(weft_event_table(e, NULL, 0, &needed));
    CHECK(needed == 2 * WEFT_EVENT_COLUMNS);
    EXPECT_ERROR(weft_event_table(e, table, 3, &needed), WEFT_EBUFFER, "buffer holds 3");
    OK(weft_event_table(e, table, 2 * WEFT_EVENT_COLUMNS, &needed));
    CHECK(table[0] == -1 && isnan(table[1]));           /* no period before 2000 */
    CHECK(table[WEFT_EVENT_COLUMNS] == 0);
    NEAR(table[WEFT_EVENT_COLUMNS + 1], 3.0, "2x2 difference in differences, by hand");
    NEAR(table[WEFT_EVENT_COLUMNS + 2], sqrt(0.5 + 2.0 / 9.0), "two-sample formula, by hand");
    CHECK(table[WEFT_EVENT_COLUMNS + 7] == 2);
    OK(weft_event_summary_count(e, &n_items));
    for (k = 0; k < n_items; ++k) {
        OK(weft_event_summary_item(e, k, &item));
        if (strcmp(item.label, "average effect on the treated") == 0) {
            NEAR(item.number, 3.0, "2x2 difference in differences, by hand");
            ++found;
        }
        if (strcmp(item.label, "pre-treatment test") == 0)
            found += strstr(item.text, "not available") != NULL;
    }
    CHECK(found == 2);
    EXPECT_ERROR(weft_event_summary_item(e, n_items, &item), WEFT_ERANGE, "past the last item");
    OK(weft_event_warning_count(e, &n_warnings));
    CHECK(n_warnings == 0);
    EXPECT_ERROR(weft_event_warning(e, 0, &text), WEFT_ERANGE, "past the last warning");
    OK(weft_event_reference(e, 0, &reference));
    CHECK(reference == 0);
    weft_event_free(e);
    e = NULL;
    OK(weft_event_new(&e, p, treat, NULL, "twfe"));
    OK(weft_event_reference(e, 0, &reference));
    CHECK(reference == 1);
    EXPECT_ERROR(weft_event_reference(e, 5, &reference), WEFT_ERANGE, "past the last row");
    weft_event_free(e);
    e = NULL;
    EXPECT_ERROR(weft_event_new(&e, p, treat, NULL, "sideways"), WEFT_EMODEL, "unknown word \"sideways\"");
    CHECK(e == NULL);
    treat[3] = 2;
    EXPECT_ERROR(weft_event_new(&e, p, treat, NULL, NULL), WEFT_EDATA, "treatment in row 5 is 2");
    treat[3] = 1;
    treat[1] = 1;
    treat[0] = 1;
    treat[1] = 0;
    EXPECT_ERROR(weft_event_new(&e, p, treat, NULL, NULL), WEFT_EDATA, "untreated again");
    EXPECT_ERROR(weft_event_new(&e, p, NULL, NULL, NULL), WEFT_EINVAL, "treatment is NULL");
    EXPECT_ERROR(weft_event_new(NULL, p, treat, NULL, NULL), WEFT_EINVAL, "out is NULL");
    EXPECT_ERROR(weft_event_row_count(NULL, &rows), WEFT_EINVAL, "event is NULL");
    weft_event_free(NULL);
    weft_panel_free(p);
}

/* The fit over partitions (weft_partial_*): Grunfeld cut into 3 partitions of whole
 * firms (D: rows sorted by firm, 20 a firm), every partial sent through its bytes. The
 * merged fd fit must give F's numbers. */
static weft_panel *partition_panel(const grunfeld *g, size_t begin, size_t end)
{
    weft_panel *p = NULL;
    OK(weft_panel_new(&p, end - begin, 2 + begin));
    if (p == NULL) return NULL;
    OK(weft_panel_set_units_number(p, g->firm + begin, NULL));
    OK(weft_panel_set_periods(p, g->year + begin, NULL));
    OK(weft_panel_set_outcome(p, "inv", g->inv + begin, NULL));
    OK(weft_panel_add_regressor(p, "value", g->value + begin, NULL));
    OK(weft_panel_add_regressor(p, "capital", g->capital + begin, NULL));
    return p;
}

static weft_partial *through_bytes(const weft_partial *partial)
{
    size_t needed = 0;
    unsigned char *bytes;
    weft_partial *copy = NULL;
    OK(weft_partial_bytes(partial, NULL, 0, &needed));
    bytes = (unsigned char *)malloc(needed);
    OK(weft_partial_bytes(partial, bytes, needed, &needed));
    OK(weft_partial_from_bytes(&copy, bytes, needed));
    free(bytes);
    return copy;
}

/* FNV-1a 64 of the partial's bytes before its last 8 (the layout in core's
 * merge_bytes.cpp), so that a changed payload can be re-sealed and reach the reader. */
static void reseal(unsigned char *bytes, size_t size)
{
    unsigned long long h = 14695981039346656037ULL;
    size_t i;
    for (i = 0; i + 8 < size; ++i) {
        h ^= bytes[i];
        h *= 1099511628211ULL;
    }
    memcpy(bytes + size - 8, &h, 8);
}

/* Every truncation and every one-byte change of a partial's bytes (re-sealed, so the
 * reader sees it) is refused or read, never a crash (valgrind runs this too). */
static void partial_bytes_hostile(const weft_partial *partial)
{
    size_t needed = 0, i;
    unsigned char *bytes, *copy;
    weft_partial *read = NULL;
    int status;
    OK(weft_partial_bytes(partial, NULL, 0, &needed));
    bytes = (unsigned char *)malloc(needed);
    copy = (unsigned char *)malloc(needed);
    OK(weft_partial_bytes(partial, bytes, needed, &needed));
    for (i = 0; i < needed; ++i) {
        status = weft_partial_from_bytes(&read, bytes, i);
        CHECK(status == WEFT_EDATA && read == NULL);
    }
    for (i = 24; i + 8 < needed; ++i) {
        memcpy(copy, bytes, needed);
        copy[i] ^= 0x5a;
        reseal(copy, needed);
        status = weft_partial_from_bytes(&read, copy, needed);
        CHECK(status == WEFT_OK || status == WEFT_EDATA);
        weft_partial_free(read);
        read = NULL;
    }
    free(copy);
    free(bytes);
}

/* Pass 3: each partition's fd residuals and fitted values with the merged passes. Their
 * squares summed over the partitions give F results.rss, 190 rows are in the equation
 * (F sample.nobs: each firm's first year has no difference), and fitted + residual is
 * the outcome's first difference (computed here from the data). */
static void partial_series_check(weft_panel *const *parts, const size_t *cuts, const weft_partial *sums,
                                 const weft_partial *scores, const grunfeld *g)
{
    double resid[MAX_ROWS], fitted[MAX_ROWS];
    unsigned char unused[MAX_ROWS];
    long double ssr = 0;
    size_t i, r, in_equation = 0, rows;
    int first_of_firm_blank = 1, sum_is_change = 1;
    for (i = 0; i < 3; ++i) {
        rows = cuts[i + 1] - cuts[i];
        OK(weft_partial_series(parts[i], sums, scores, resid, fitted, unused, rows));
        for (r = 0; r < rows; ++r) {
            const size_t row = cuts[i] + r;
            const int first = row == 0 || g->firm[row] != g->firm[row - 1];
            if (first) first_of_firm_blank &= unused[r] == 1 && resid[r] != resid[r];
            if (unused[r]) continue;
            ++in_equation;
            ssr += (long double)resid[r] * resid[r];
            sum_is_change &= fabs(fitted[r] + resid[r] - (g->inv[row] - g->inv[row - 1])) < 1e-9 * (1 + fabs(g->inv[row]));
        }
    }
    NEAR((double)ssr, 345455.886220664, "F results.rss, from the residuals of pass 3");
    CHECK(in_equation == 190);
    CHECK(first_of_firm_blank);
    CHECK(sum_is_change);
    EXPECT_ERROR(weft_partial_series(parts[0], sums, scores, resid, fitted, unused, 7), WEFT_EBUFFER, "row count");
    EXPECT_ERROR(weft_partial_series(parts[0], scores, sums, resid, NULL, NULL, 60), WEFT_EINVAL, "sums");
}

static void test_partials(const grunfeld *g)
{
    static const char *const terms[] = {"intercept", "value", "capital"};
    /* F results.coef, results.se.classical */
    static const double fd_coef[] = {-1.81889015858514, 0.0897624949908166, 0.29176671969407};
    static const double fd_se[] = {3.56559313557045, 0.00836358501627507, 0.0537515976408947};
    static const size_t cuts[] = {0, 60, 100, 200};
    double grid[20], resid[MAX_ROWS];
    weft_panel *parts[3];
    weft_partial *sums = NULL, *scores = NULL, *one = NULL, *copy = NULL;
    weft_model *m = NULL;
    unsigned char small[8], *bytes;
    size_t i, needed = 0;
    int kind = 0;
    const char *terms_joint[] = {"value", "capital"};
    weft_wald_result w;

    for (i = 0; i < 20; ++i) grid[i] = 1935.0 + (double)i;  /* D: years 1935-1954 */
    for (i = 0; i < 3; ++i) parts[i] = partition_panel(g, cuts[i], cuts[i + 1]);
    for (i = 0; i < 3; ++i) {
        OK(weft_partial_sums(&one, parts[i], "fd", grid, 20));
        copy = through_bytes(one);
        weft_partial_free(one);
        if (sums == NULL) sums = copy;
        else { OK(weft_partial_merge(sums, copy)); weft_partial_free(copy); }
    }
    OK(weft_partial_kind(sums, &kind));
    CHECK(kind == WEFT_PARTIAL_SUMS);
    for (i = 0; i < 3; ++i) {
        OK(weft_partial_scores(&one, parts[i], sums));
        copy = through_bytes(one);
        weft_partial_free(one);
        if (scores == NULL) scores = copy;
        else { OK(weft_partial_merge(scores, copy)); weft_partial_free(copy); }
    }
    OK(weft_partial_kind(scores, &kind));
    CHECK(kind == WEFT_PARTIAL_SCORES);
    partial_bytes_hostile(sums);
    partial_bytes_hostile(scores);
    OK(weft_partial_finish(&m, sums, scores));
    check_table(m, terms, fd_coef, fd_se, 3, "F results.coef / se.classical, over partitions");
    NEAR(value_of(m, "ssr", NULL), 345455.886220664, "F results.rss");
    NEAR(value_of(m, "n", NULL), 190, "F sample.nobs");
    OK(weft_test_joint(m, terms_joint, 2, &w));
    CHECK(w.f_df1 == 2 && w.f_df2 == 187);
    /* what needs the equation's rows is refused by name */
    EXPECT_ERROR(weft_model_residuals(m, resid, NULL, MAX_ROWS, NULL), WEFT_ECOMPUTE, "over partitions");
    weft_model_free(m);
    partial_series_check(parts, cuts, sums, scores, g);

    /* misuse and damaged bytes */
    EXPECT_ERROR(weft_partial_sums(&one, parts[0], "between", grid, 20), WEFT_EMODEL, "one machine");
    CHECK(one == NULL);
    EXPECT_ERROR(weft_partial_sums(&one, parts[0], "fd cr2", grid, 20), WEFT_EMODEL, "use cluster");
    EXPECT_ERROR(weft_partial_sums(&one, parts[0], "fd", grid, 3), WEFT_EDATA, "not on the period grid");
    EXPECT_ERROR(weft_partial_sums(&one, parts[0], "fd", NULL, 20), WEFT_EINVAL, "grid is NULL");
    EXPECT_ERROR(weft_partial_merge(sums, scores), WEFT_EINVAL, "pass-1 sums");
    EXPECT_ERROR(weft_partial_finish(&m, scores, sums), WEFT_EINVAL, "sums");
    EXPECT_ERROR(weft_partial_scores(&one, parts[0], scores), WEFT_EINVAL, "pass-1 sums");
    EXPECT_ERROR(weft_partial_bytes(sums, small, sizeof small, &needed), WEFT_EBUFFER, "pass a buffer");
    bytes = (unsigned char *)malloc(needed);
    OK(weft_partial_bytes(sums, bytes, needed, &needed));
    bytes[needed / 2] ^= 0x01;
    EXPECT_ERROR(weft_partial_from_bytes(&one, bytes, needed), WEFT_EDATA, "check sum");
    EXPECT_ERROR(weft_partial_from_bytes(&one, bytes, needed - 3), WEFT_EDATA, "truncated");
    free(bytes);
    weft_partial_free(NULL);
    weft_partial_free(sums);
    weft_partial_free(scores);
    for (i = 0; i < 3; ++i) weft_panel_free(parts[i]);
}

/* The weighted fit over partitions: Grunfeld with the weight column of
 * grunfeld_weighted.csv, 3 partitions of whole firms, every partial through its bytes;
 * within cluster against tests/data/panel/weights_reference.json (R lm(weights = ) with
 * sandwich 3.0.2, within.cluster.se), and a weighted partial refuses an unweighted one. */
static weft_partial *merged_pass(weft_panel *const *parts, const char *model, const double *grid,
                                 const weft_partial *sums)
{
    weft_partial *merged = NULL, *one = NULL, *copy;
    size_t i;
    for (i = 0; i < 3; ++i) {
        if (sums == NULL) OK(weft_partial_sums(&one, parts[i], model, grid, 20));
        else OK(weft_partial_scores(&one, parts[i], sums));
        copy = through_bytes(one);
        weft_partial_free(one);
        if (merged == NULL) merged = copy;
        else { OK(weft_partial_merge(merged, copy)); weft_partial_free(copy); }
    }
    return merged;
}

static void test_partials_weighted(const grunfeld *g, const char *grunfeld_path)
{
    static const double within_se[] = {0.0173401463384039, 0.056109605975211};
    static const size_t cuts[] = {0, 60, 100, 200};
    static double w[MAX_ROWS];
    double grid[20], table[2 * WEFT_COEF_COLUMNS];
    weft_panel *parts[3], *plain;
    weft_partial *sums, *scores, *other = NULL;
    weft_model *m = NULL;
    weft_summary_item item;
    size_t i, needed = 0;
    CHECK(read_weights(grunfeld_path, w));
    for (i = 0; i < 20; ++i) grid[i] = 1935.0 + (double)i;
    for (i = 0; i < 3; ++i) {
        parts[i] = partition_panel(g, cuts[i], cuts[i + 1]);
        OK(weft_panel_set_weights(parts[i], "w", w + cuts[i], NULL));
    }
    sums = merged_pass(parts, "within cluster", grid, NULL);
    scores = merged_pass(parts, "within cluster", grid, sums);
    OK(weft_partial_finish(&m, sums, scores));
    OK(weft_model_coefficients(m, table, 2 * WEFT_COEF_COLUMNS, &needed));
    for (i = 0; i < 2; ++i)
        NEAR_TOL(table[i * WEFT_COEF_COLUMNS + WEFT_COEF_SE], within_se[i], 1e-9,
                 "weights_reference within.cluster.se, over partitions");
    CHECK(summary_find(m, "rows with weight 0", &item) > 0 && item.number == 2.0);
    CHECK(value_of(m, "weighted", NULL) == 1.0);
    weft_model_free(m);
    plain = partition_panel(g, 0, 60);
    OK(weft_partial_sums(&other, plain, "within cluster", grid, 20));
    EXPECT_ERROR(weft_partial_merge(sums, other), WEFT_EDATA, "different weights");
    weft_partial_free(other);
    weft_panel_free(plain);
    weft_partial_free(sums);
    weft_partial_free(scores);
    for (i = 0; i < 3; ++i) weft_panel_free(parts[i]);
}

int main(int argc, char **argv)
{
    static grunfeld g;
    test_last_error(); /* first: needs a thread with no failure yet */
    if (argc < 2 || !read_grunfeld(argv[1], &g)) {
        fprintf(stderr, "usage: c_consumer <grunfeld.csv> (could not read 200 rows)\n");
        return 2;
    }
    test_versions_and_status();
    test_options();
    test_panel_misuse(&g);
    test_structure_and_transforms(&g);
    test_pooled(&g);
    test_pooled_robust(&g);
    test_fd_between(&g);
    test_within_random(&g);
    test_units_masks_and_rows(&g);
    test_model_misuse(&g);
    test_borrowed(&g);
    test_borrowed_units(&g);
    test_bootstrap(&g);
    test_cr2(&g);
    test_weights(&g, argv[1]);
    test_event();
    test_partials(&g);
    test_partials_weighted(&g, argv[1]);
    printf("c_consumer: %d checks, %d failed\n", checks, failures);
    return failures == 0 ? 0 : 1;
}
