/* version_agree.c - the header's version macros and the library's run-time version
 * agree. Expected values: weft.h itself (WEFT_VERSION_*), against the library's
 * weft_version_number()/weft_version_text(), which are built from the project
 * version in the top-level CMakeLists.txt. Also compiled with -std=c99 -pedantic. */
#include "weft.h"

#include <stdio.h>
#include <string.h>

int main(void)
{
    char text[32];
    int failed = 0;
    sprintf(text, "%d.%d.%d", WEFT_VERSION_MAJOR, WEFT_VERSION_MINOR, WEFT_VERSION_PATCH);
    if (weft_version_number() != WEFT_VERSION_NUMBER) {
        fprintf(stderr, "library version number %d, header %d\n", weft_version_number(),
                WEFT_VERSION_NUMBER);
        failed = 1;
    }
    if (strcmp(weft_version_text(), WEFT_VERSION) != 0 || strcmp(text, WEFT_VERSION) != 0) {
        fprintf(stderr, "library version text \"%s\", header \"%s\" (parts %s)\n",
                weft_version_text(), WEFT_VERSION, text);
        failed = 1;
    }
    if (WEFT_VERSION_NUMBER !=
        WEFT_VERSION_MAJOR * 10000 + WEFT_VERSION_MINOR * 100 + WEFT_VERSION_PATCH) {
        fprintf(stderr, "WEFT_VERSION_NUMBER does not match its parts\n");
        failed = 1;
    }
    printf("header %s (%d), library %s (%d)\n", WEFT_VERSION, WEFT_VERSION_NUMBER,
           weft_version_text(), weft_version_number());
    return failed;
}
