/* header_alone.c - weft.h compiles on its own as strict C99 (-std=c99 -Wall -Wextra
 * -pedantic -Werror), with nothing included before it. Built, not run. */
#include "weft.h"

int weft_header_alone_check(void);
int weft_header_alone_check(void)
{
    weft_options options = WEFT_OPTIONS_INIT;
    return options.estimator;
}
