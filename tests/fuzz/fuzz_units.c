/* libFuzzer target: the quantity parser. The input is one quantity text ("4 mm", "21 degC");
 * it is parsed as every dimension with tp_units_parse, as a bare number with tp_units_parse_double,
 * and its unit part is fed back through tp_units_from_si. Any crash, sanitizer report, a
 * non-finite result reported as success, or a temperature at or below 0 K is a finding. No check
 * values: the properties are the contracts stated in src/base/units.h (their source). */
#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "units.h"

#define FUZZ_TEXT_MAX 256 /* longer inputs are cut: config values are short */

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char text[FUZZ_TEXT_MAX + 1], msg[256];
    const char *hint, *unit;
    double si, v;
    int dim;
    if (size > FUZZ_TEXT_MAX)
        size = FUZZ_TEXT_MAX;
    memcpy(text, data, size);
    text[size] = '\0';
    for (dim = 0; dim < TP_DIM_COUNT; dim++) {
        hint = NULL;
        if (tp_units_parse(text, (tp_dim)dim, &si, msg, sizeof msg, &hint) == TP_OK) {
            if (!isfinite(si))
                abort(); /* the contract: never NaN or infinity */
            if (dim == TP_DIM_TEMPERATURE && !(si > 0.0))
                abort(); /* absolute temperatures are above 0 K */
        } else if (!hint || !memchr(msg, '\0', sizeof msg)) {
            abort(); /* failures always come with a hint and a terminated message */
        }
    }
    if (tp_units_parse_double(text, &v) == 0 && !isfinite(v))
        abort();
    /* The text after the number, as a unit for writing values back. */
    unit = text + strspn(text, " +-0123456789.eE");
    for (dim = 0; dim < TP_DIM_COUNT; dim++)
        (void)tp_units_from_si(1.0, unit, (tp_dim)dim, &v);
    return 0;
}
