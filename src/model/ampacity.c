/* Copper ampacity tables, their ambient correction, gauge recommendation and a fuse within the
 * wire's ampacity.
 *
 * Two tables, chosen by wiring.installation:
 *
 * - cable (default): NEC (NFPA 70) 2020 Table 310.16, "Ampacities of insulated conductors with
 *   not more than three current-carrying conductors in raceway, cable, or earth (directly
 *   buried), based on an ambient temperature of 30 degC", copper, columns 60, 75 and 90 degC
 *   of conductor (insulation) temperature. The 75 degC column from 14 to 4 AWG was confirmed
 *   against a reproduction of the table; the 60 and 90 degC columns from 10 to 4 AWG against a
 *   reproduction of an earlier edition with the same values; the rest (14 and 12 AWG at 60
 *   and 90 degC, where earlier editions differ, and the 18 and 16 AWG rows, rated in the 90
 *   degC column only) from memory. Ambient correction: the equation of NEC 310.15(B),
 *   I' = I sqrt((Tc - Ta') / (Tc - Ta)) with Ta = 30 degC, whose values at the warm end of
 *   each 5 K band are the factors of Table 310.15(B)(1) (confirmed against a reproduction of
 *   that table). A wire thinner than the smallest row of its column has no rating.
 * - chassis: the "maximum amps for chassis wiring" column of the American Wire Gauge table in
 *   the Handbook of Electronic Tables and Formulas (Howard W. Sams), for a single conductor in
 *   free air; from memory, matching secondary reproductions of that table (24 to 4 AWG). The
 *   source states neither an insulation rating nor an ambient, so no correction is applied;
 *   it covers the thin hook-up wire of printers (28 to 4 AWG) that the building-wiring table
 *   does not.
 *
 * A wire's size is read at the largest tabulated conductor whose area is not larger than the
 * wire's (ASTM B258 areas): a metric 1.5 mm2 wire is read at 16 AWG (1.31 mm2), never at
 * 14 AWG (2.08 mm2). */
#include "ampacity.h"

#include <math.h>
#include <stddef.h>

#include "circuit.h"

#define N(a) (sizeof(a) / sizeof((a)[0]))
#define KELVIN_20C 293.15 /* K */
#define COL60 333.15      /* K, the 60 degC column */
#define COL75 348.15      /* K, the 75 degC column */
#define COL90 363.15      /* K, the 90 degC column */

typedef struct nec_row {
    double awg;
    double a[3]; /* A at 60, 75 and 90 degC; TP_UNSET: not rated */
} nec_row;

/* NEC (NFPA 70) 2020 Table 310.16, copper (see the file's head for what was confirmed). */
static const nec_row nec_310_16[] = {
    {18, {TP_UNSET, TP_UNSET, 14}}, {16, {TP_UNSET, TP_UNSET, 18}}, {14, {15, 20, 25}},
    {12, {20, 25, 30}},
    {10, {30, 35, 40}},             {8, {40, 50, 55}},              {6, {55, 65, 75}},
    {4, {70, 85, 95}},
};

typedef struct chassis_row {
    double awg;
    double a; /* A */
} chassis_row;

/* Handbook of Electronic Tables and Formulas, chassis wiring (from memory). */
static const chassis_row chassis[] = {
    {28, 1.4}, {26, 2.2}, {24, 3.5}, {22, 7.0}, {20, 11.0}, {18, 16.0}, {16, 22.0},
    {14, 32.0}, {12, 41.0}, {10, 55.0}, {8, 73.0}, {6, 101.0}, {4, 135.0},
};

/* The series a recommendation picks from: AWG (even numbers, as stocked) and metric nominal
 * cross-sections (IEC 60228 from 0.5 mm2; 0.25 and 0.34 mm2 as common for thin flexible
 * wire, common practice, no source). */
static const double awg_series[] = {24, 22, 20, 18, 16, 14, 12, 10, 8, 6, 4};
static const double metric_series[] = {0.25e-6, 0.34e-6, 0.5e-6, 0.75e-6, 1.0e-6, 1.5e-6,
                                       2.5e-6,  4.0e-6,  6.0e-6, 10e-6,   16e-6};

/* Standard fuse ratings, A (miniature and blade fuses; common practice, no source). */
static const double fuse_sizes[] = {0.5, 1.0, 1.6, 2.0,  2.5,  3.15, 4.0, 5.0, 6.3,
                                    7.5, 8.0, 10,  12.5, 15,   16,   20,  25,  30,
                                    32,  35,  40,  50,   63,   80,   100, 125};

const char *tp_ampacity_table_name(tp_installation installation)
{
    return installation == TP_INSTALL_CHASSIS
               ? "Handbook of Electronic Tables and Formulas, chassis wiring (from memory)"
               : "NEC (NFPA 70) 2020 Table 310.16";
}

const char *tp_ampacity_table_conditions(tp_installation installation)
{
    return installation == TP_INSTALL_CHASSIS
               ? "copper, a single conductor in free air; no insulation rating or ambient "
                 "stated, none corrected for"
               : "copper, at most three current-carrying conductors in a raceway or cable, "
                 "30 degC ambient, corrected by NEC 310.15(B)";
}

double tp_ampacity_correction(double column, double ambient)
{
    if (!(ambient < column))
        return 0.0;
    return sqrt((column - ambient) / (column - TP_AMPACITY_REF_AMBIENT));
}

void tp_ampacity_lookup(double area, const tp_ampacity_conditions *c, tp_ampacity *a)
{
    size_t i;
    double fit = area * (1.0 + 1e-9); /* a wire given as its own AWG reads its own row */
    a->amps = a->table_amps = a->column = a->row_awg = TP_UNSET;
    a->factor = 1.0;
    if (c->installation == TP_INSTALL_CHASSIS) {
        for (i = 0; i < N(chassis); i++)
            if (tp_circuit_awg_area(chassis[i].awg) <= fit) {
                a->row_awg = chassis[i].awg;
                a->table_amps = a->amps = chassis[i].a;
            }
        return;
    }
    {
        int col = c->insulation >= COL90 - 1e-9   ? 2
                  : c->insulation >= COL75 - 1e-9 ? 1
                  : c->insulation >= COL60 - 1e-9 ? 0
                                                   : -1;
        static const double col_t[3] = {COL60, COL75, COL90};
        if (col < 0)
            return;
        a->column = col_t[col];
        for (i = 0; i < N(nec_310_16); i++)
            if (isfinite(nec_310_16[i].a[col]) && tp_circuit_awg_area(nec_310_16[i].awg) <= fit) {
                a->row_awg = nec_310_16[i].awg;
                a->table_amps = nec_310_16[i].a[col];
            }
        if (!isfinite(a->table_amps))
            return;
        a->factor = tp_ampacity_correction(a->column, c->ambient);
        a->amps = a->table_amps * a->factor;
    }
}

/* Pick from one series (sizes as AWG numbers when `awg`, else areas in m2). */
static void pick(const double *series, size_t n, int awg, const tp_ampacity_choice *w,
                 const tp_ampacity_conditions *c, tp_ampacity_pick *p)
{
    size_t i, by_amps = n, by_drop = n, k;
    p->size = p->area = p->ampacity = p->drop = TP_UNSET;
    p->limited_by = NULL;
    for (i = 0; i < n; i++) {
        double area = awg ? tp_circuit_awg_area(series[i]) : series[i];
        tp_ampacity a;
        tp_ampacity_lookup(area, c, &a);
        if (by_amps == n && isfinite(a.amps) && a.amps >= w->amps)
            by_amps = i;
        if (by_drop == n &&
            (!isfinite(w->length) ||
             w->amps * tp_circuit_copper_resistance(area, 2.0 * w->length, KELVIN_20C) <=
                 w->max_drop * w->volts))
            by_drop = i;
    }
    if (by_amps == n || by_drop == n)
        return;
    k = by_amps > by_drop ? by_amps : by_drop;
    p->size = series[k];
    p->area = awg ? tp_circuit_awg_area(series[k]) : series[k];
    {
        tp_ampacity a;
        tp_ampacity_lookup(p->area, c, &a);
        p->ampacity = a.amps;
    }
    if (isfinite(w->length))
        p->drop = w->amps * tp_circuit_copper_resistance(p->area, 2.0 * w->length, KELVIN_20C);
    p->limited_by = by_amps > by_drop ? "ampacity" : by_drop > by_amps ? "drop" : "both";
}

void tp_ampacity_wire_recommend(double amps, double length, double volts, double max_drop,
                       const tp_ampacity_conditions *c, tp_ampacity_choice *w)
{
    w->amps = amps;
    w->length = length;
    w->volts = volts;
    w->max_drop = max_drop;
    pick(awg_series, N(awg_series), 1, w, c, &w->awg);
    pick(metric_series, N(metric_series), 0, w, c, &w->metric);
}

double tp_ampacity_fuse_suggest(double amps)
{
    size_t i;
    for (i = 0; i < N(fuse_sizes); i++)
        if (fuse_sizes[i] >= TP_AMPACITY_FUSE_FACTOR * amps - 1e-9)
            return fuse_sizes[i];
    return 0.0;
}

double tp_ampacity_fuse_within(double amps, double ampacity, int *below_rule)
{
    double f = tp_ampacity_fuse_suggest(amps);
    size_t i;
    *below_rule = 0;
    if (!isfinite(ampacity) || (f > 0 && f <= ampacity))
        return f;
    for (i = N(fuse_sizes); i-- > 0;)
        if (fuse_sizes[i] <= ampacity && fuse_sizes[i] > amps) {
            *below_rule = 1;
            return fuse_sizes[i];
        }
    return 0.0;
}
