/* libFuzzer target: the measured-log reader of `tepid fit` (src/input/templog.c). The input is a
 * whole CSV log; it is parsed with the automatic column choice and with every column named
 * explicitly. Any crash or sanitizer report is a finding; so is a log accepted with rows whose
 * times do not strictly increase or whose readings are not finite. No check values: the
 * properties are the contracts stated in src/input/templog.h (their source). */
#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>

#include "templog.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static void check(const tp_templog *log)
{
    long i;
    for (i = 0; i < log->n; i++) {
        if (!isfinite(log->t[i]) || !isfinite(log->reading[i]))
            abort();
        if (i > 0 && !(log->t[i] > log->t[i - 1]))
            abort(); /* the contract: strictly increasing time */
    }
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static const tp_templog_opts named = {"time_s", "temp_C", "duty"};
    tp_diag d;
    tp_templog log = {0};
    tp_diag_init(&d, NULL);
    if (tp_templog_parse("fuzz.csv", (const char *)data, size, NULL, &log, &d) == TP_OK)
        check(&log);
    tp_templog_clear(&log);
    tp_diag_init(&d, NULL);
    if (tp_templog_parse("fuzz.csv", (const char *)data, size, &named, &log, &d) == TP_OK)
        check(&log);
    tp_templog_clear(&log);
    return 0;
}
