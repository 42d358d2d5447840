/* The current a copper wire may carry, from a published ampacity table corrected for the
 * ambient as the table's standard says; the smallest gauge (AWG and mm2) that meets both that
 * ampacity and a voltage-drop limit; and a fuse no larger than the wire's ampacity. The
 * tables, their conditions and sources: ampacity.c and docs/sizing.md. */
#ifndef TP_AMPACITY_H
#define TP_AMPACITY_H

#include "description.h"

#define TP_AMPACITY_REF_AMBIENT 303.15 /* K, 30 degC: the ambient of NEC Table 310.16 */
/* K, 60 degC: NEC 110.14(C)(1)(a) sizes circuits of 100 A or less by the 60 degC column unless
 * the equipment is marked for more (from memory). */
#define TP_AMPACITY_INSULATION_DEFAULT 333.15
/* -, voltage drop in the wiring loop as a share of the supply (common practice, no source). */
#define TP_AMPACITY_DROP_DEFAULT 0.03
/* -, fuse rating over the continuous current: a fuse carries its continuous load at no more
 * than 80 % of its rating (common practice, no source). */
#define TP_AMPACITY_FUSE_FACTOR 1.25

/* Where the wires run and what they are rated for. */
typedef struct tp_ampacity_conditions {
    tp_installation installation; /* which table applies */
    double insulation;            /* K, the insulation's temperature rating */
    double ambient;               /* K, the air around the wires */
} tp_ampacity_conditions;

/* One lookup. */
typedef struct tp_ampacity {
    double amps;       /* A after the ambient correction; NaN: the table rates no such wire (it
                          is smaller than the table's smallest row for that insulation, or the
                          insulation is below the table's coolest column) */
    double table_amps; /* A as tabulated (NaN as above) */
    double factor;     /* -, the ambient correction applied (1: the table states none) */
    double column;     /* K, the insulation column read (NaN: the table has one column) */
    double row_awg;    /* the AWG row read: the largest tabulated conductor not larger than the
                          wire (NaN: none) */
} tp_ampacity;

/* The table's name ("NEC (NFPA 70) 2020 Table 310.16") and its conditions, for reports. */
const char *tp_ampacity_table_name(tp_installation installation);
const char *tp_ampacity_table_conditions(tp_installation installation);

/* The ambient correction of NEC 310.15(B) for a column of conductor temperature `column`
 * (K) at `ambient` (K), against the table's 30 degC: sqrt((Tc - Ta) / (Tc - 30 degC)); 0 when
 * the ambient reaches the column's temperature. */
double tp_ampacity_correction(double column, double ambient);

/* The ampacity of a copper conductor of cross-section `area` (m2) under `c`. */
void tp_ampacity_lookup(double area, const tp_ampacity_conditions *c, tp_ampacity *a);

/* The smallest size of one series (AWG or metric) that meets both limits. */
typedef struct tp_ampacity_pick {
    double size;     /* AWG number, or the metric cross-section in m2; NaN: none in the series */
    double area;     /* m2 */
    double ampacity; /* A (tp_ampacity_lookup) */
    double drop;     /* V over the loop at the current (NaN without a length) */
    const char *limited_by; /* "ampacity", "drop" or "both": the limit that needs this size */
} tp_ampacity_pick;

typedef struct tp_ampacity_choice {
    double amps;     /* A the wire carries continuously */
    double length;   /* m one way (the loop is twice this); NaN: the drop is not checked */
    double volts;    /* V of the supply the drop is a share of */
    double max_drop; /* -, share of `volts` */
    tp_ampacity_pick awg, metric;
} tp_ampacity_choice;

/* The smallest AWG (24 to 4, even numbers) and the smallest metric size (0.25 to 16 mm2) whose
 * ampacity under `c` is at least `amps` and whose loop of 2 x `length` of copper at 20 degC
 * (IEC 60028) drops at most `max_drop` x `volts` at that current. The current is taken as
 * given: a thicker wire lowers the series resistance and raises it slightly. */
void tp_ampacity_wire_recommend(double amps, double length, double volts, double max_drop,
                       const tp_ampacity_conditions *c, tp_ampacity_choice *w);

/* The smallest standard fuse rating at or above TP_AMPACITY_FUSE_FACTOR x `amps`, A; 0 above the
 * table. */
double tp_ampacity_fuse_suggest(double amps);

/* A fuse for a circuit running `amps` continuously through a wire of ampacity `ampacity` (NaN:
 * unknown, the 125 % rule alone): tp_ampacity_fuse_suggest when it is within the ampacity; else the
 * largest standard rating above `amps` and within the ampacity, with *below_rule set (it is
 * under 1.25 x amps, and may open on a long full-on run); else 0 (no standard fuse fits
 * between the running current and the ampacity). Never above the ampacity. */
double tp_ampacity_fuse_within(double amps, double ampacity, int *below_rule);

#endif
