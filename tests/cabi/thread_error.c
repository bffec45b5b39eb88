/* thread_error.c - the last-error text is per thread (weft.h "Threads"): a failure on
 * one thread leaves the other threads' texts alone, and models fitted on two threads
 * at once give exactly the slope of the same fit made alone (an identity: no
 * reference number is involved; the numbers themselves are checked in c_consumer.c). */
#include "weft.h"

#include <pthread.h>
#include <stdio.h>
#include <string.h>

static const double unit[] = {1, 1, 1, 2, 2, 2, 3, 3, 3};
static const double period[] = {1, 2, 3, 1, 2, 3, 1, 2, 3};
static const double x[] = {1, 2, 4, 3, 5, 4, 7, 6, 9};
static const double y[] = {2, 3, 7, 5, 8, 8, 11, 9, 15};

static double fit_slope(void)
{
    weft_panel *panel = NULL;
    weft_model *model = NULL;
    double slope = -1;
    if (weft_panel_new(&panel, 9, 1) || weft_panel_set_units_number(panel, unit, NULL) ||
        weft_panel_set_periods(panel, period, NULL) || weft_panel_set_outcome(panel, "y", y, NULL) ||
        weft_panel_add_regressor(panel, "x", x, NULL) || weft_model_new_text(&model, panel, "within") ||
        weft_model_value(model, "estimate", "x", &slope))
        fprintf(stderr, "%s\n", weft_last_error());
    weft_model_free(model);
    weft_panel_free(panel);
    return slope;
}

struct job {
    int fail_first;
    int ok;
    double slope;
};

static void *run(void *argument)
{
    struct job *job = (struct job *)argument;
    int i;
    job->ok = 1;
    if (strcmp(weft_last_error(), "weft: no error") != 0) job->ok = 0;
    if (job->fail_first) {
        if (weft_panel_new(NULL, 1, 1) != WEFT_EINVAL) job->ok = 0;
        if (strstr(weft_last_error(), "out is NULL") == NULL) job->ok = 0;
    }
    for (i = 0; i < 20; ++i) job->slope = fit_slope();
    if (!job->fail_first && strcmp(weft_last_error(), "weft: no error") != 0) job->ok = 0;
    return NULL;
}

int main(void)
{
    struct job a = {1, 0, 0}, b = {0, 0, 0};
    pthread_t ta, tb;
    double alone;
    /* This thread fails first; the two new threads must not see its text. */
    weft_options_init(NULL);
    alone = fit_slope();
    if (pthread_create(&ta, NULL, run, &a) || pthread_create(&tb, NULL, run, &b)) return 2;
    pthread_join(ta, NULL);
    pthread_join(tb, NULL);
    if (strstr(weft_last_error(), "options is NULL") == NULL) {
        fprintf(stderr, "main thread's text changed: %s\n", weft_last_error());
        return 1;
    }
    if (!a.ok || !b.ok || a.slope != alone || b.slope != alone || alone == -1) {
        fprintf(stderr, "threads: ok %d %d, slopes %.17g %.17g, alone %.17g\n", a.ok, b.ok,
                a.slope, b.slope, alone);
        return 1;
    }
    printf("thread_error: per-thread messages kept apart, slopes agree (%.12g)\n", alone);
    return 0;
}
