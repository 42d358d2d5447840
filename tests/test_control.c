/* Tests of the reading model's ADC divider at the ends of its range (src/control.c). */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include "control.h"

/* A 100 kohm (25 degC) NTC, beta 3950 K, below a 4.7 kohm resistor from 3.3 V, read by a 12-bit
 * ADC referenced to the same 3.3 V: an invented but ordinary divider. */
static const tp_reading_model ntc = {0.0, 1, 100e3, 3950.0, 4.7e3, 3.3, 3.3, 12};

/* At 5 K the Beta equation gives R = R25 exp(beta (1/T - 1/T25)) = exp(776) ohm, beyond double
 * range (inf). The divider then reads the full supply, and the code saturates at the top:
 * 2^12 - 1 = 4095 (closed form: V = supply R / (R + series) -> supply as R -> inf). The old
 * formula took inf / inf = NaN and converted it to long (undefined). */
static void test_adc_code_open_thermistor_saturates_high(void **state)
{
    (void)state;
    assert_int_equal(tp_adc_code(&ntc, 5.0), 4095);
}

/* At 25 degC R = R25: V = 3.3 * 100 / 104.7 = 3.1519 V, code floor(3.1519 / 3.3 * 4096) =
 * floor(3912.15) = 3912 (hand calculation). */
static void test_adc_code_at_25c(void **state)
{
    (void)state;
    assert_int_equal(tp_adc_code(&ntc, 298.15), 3912);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_adc_code_open_thermistor_saturates_high),
        cmocka_unit_test(test_adc_code_at_25c),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
