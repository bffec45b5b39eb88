/* A tiny program built against an installed weft: fits a pooled model on four rows
 * of two units and prints the slope. y = 1 + 2x exactly, so the slope is 2 (by
 * construction of the data, no estimate needed). */
#include <weft.h>

#include <math.h>
#include <stdio.h>

int main(void)
{
    const double unit[] = {1, 1, 2, 2}, period[] = {1, 2, 1, 2};
    const double x[] = {0, 1, 3, 5}, y[] = {1, 3, 7, 11};
    weft_panel *panel = NULL;
    weft_model *model = NULL;
    double slope = 0;
    if (weft_version_number() != WEFT_VERSION_NUMBER) {
        fprintf(stderr, "header %d but library %d\n", WEFT_VERSION_NUMBER, weft_version_number());
        return 1;
    }
    if (weft_panel_new(&panel, 4, 1) != WEFT_OK || weft_panel_set_units_number(panel, unit, NULL) ||
        weft_panel_set_periods(panel, period, NULL) || weft_panel_set_outcome(panel, "y", y, NULL) ||
        weft_panel_add_regressor(panel, "x", x, NULL) ||
        weft_model_new_text(&model, panel, "pooled") ||
        weft_model_value(model, "estimate", "x", &slope)) {
        fprintf(stderr, "%s\n", weft_last_error());
        return 1;
    }
    weft_model_free(model);
    weft_panel_free(panel);
    printf("weft %s: slope %.12g\n", weft_version_text(), slope);
    return fabs(slope - 2.0) < 1e-10 ? 0 : 1;
}
