/* tepid's version and the versions of the libraries it was built with (tepid --version). */
#ifndef TP_VERSION_H
#define TP_VERSION_H

#include <stdio.h>

/* Print "tepid VERSION" and one line per library: SUNDIALS, udunits2, PLplot, libyaml, cJSON,
 * cminpack, each with the version the build found (CMakeLists.txt passes them in). */
void tp_version_print(FILE *fp);

/* The libraries of tp_version_print with their versions, in its order, into names[] and
 * versions[] (static strings), at most `max`; returns how many. */
int tp_version_libraries(const char **names, const char **versions, int max);

#endif
