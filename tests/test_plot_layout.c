/* Tests of a chart's layout (tp_plot_chart_layout, what tp_plot_chart_write draws): labels of
 * reference lines a few units apart do not print over each other or read as a neighbour's, a
 * legend hides no data even when every corner holds some, and a series keeps its colour in
 * every panel where its label appears. Cases modelled on the guard chart (setpoint, hold band
 * and ceiling; six fault readings pinned at both edges). */
#include "tp_test.h"

#include "figure.h"
#include "plot.h"

#define N 181 /* points per series: 0 to 30 min every 10 s */

static double t_min[N], ramp[N], pinned_high[N], pinned_low[N], half[N], cold[N], fall[N];

/* Readings like those of the guard chart's cold-start faults: a ramp clipped at 130, one
 * pinned at 130 and one at 5, one at the room's 20, a slow rise to 90 and a decay towards
 * 20 (shapes of our own choosing). */
static void make_data(void)
{
    int i;
    for (i = 0; i < N; i++) {
        double t = i / 6.0;
        t_min[i] = t;
        ramp[i] = fmin(20.0 + 8.0 * t, 130.0);
        pinned_high[i] = 130.0;
        pinned_low[i] = 5.0;
        cold[i] = 20.0;
        half[i] = 20.0 + 70.0 * (1.0 - exp(-t / 8.0));
        fall[i] = 20.0 + 70.0 * exp(-t / 6.0);
    }
}

static const tp_plot_hline guard_lines[] = {
    {"setpoint", 90.0}, {"ceiling", 101.0}, {"hold band", 88.0}};

static int overlap(const tp_plot_box *a, const tp_plot_box *b)
{
    return a->x0 < b->x1 && b->x0 < a->x1 && a->y0 < b->y1 && b->y0 < a->y1;
}

static void layout(const tp_plot_chart *chart, tp_plot_layout *l)
{
    tp_diag d;
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_plot_chart_layout("layout.png", chart, l, &d), TP_OK);
    assert_int_equal(l->n_panels, chart->n_panels);
}

static void test_labels_of_close_lines_stay_apart(void **state)
{
    /* Three lines 2 and 11 degC apart on a 0 to 130 axis, whose labels are taller than the
     * gap between the lines: each label must be clear of the others, and none may have
     * another line between it and its own (or it reads as that line's). */
    tp_plot_series s[] = {{"reading", t_min, half, N, 0, 0, 0}};
    tp_plot_panel panel = {"reading (degC)", NULL, s, 1, guard_lines, 3, 1.0};
    tp_plot_chart chart = {"labels", "time (min)", &panel, 1, 0, 0};
    tp_plot_layout l;
    const tp_plot_panel_layout *pl;
    size_t i, j;
    (void)state;
    make_data();
    layout(&chart, &l);
    pl = &l.panels[0];
    for (i = 0; i < 3; i++) {
        const tp_plot_box *b = &pl->labels[i];
        double v = (guard_lines[i].y - pl->ylo) / (pl->yhi - pl->ylo);
        assert_true(b->x0 < b->x1 && b->y0 < b->y1);
        assert_true(b->x0 >= 0.0 && b->x1 <= 1.0 && b->y0 >= 0.0 && b->y1 <= 1.0);
        for (j = 0; j < 3; j++) {
            double vj = (guard_lines[j].y - pl->ylo) / (pl->yhi - pl->ylo);
            if (j == i)
                continue;
            if (overlap(b, &pl->labels[j]))
                fail_msg("labels '%s' and '%s' overlap", guard_lines[i].label,
                         guard_lines[j].label);
            /* the stretch from the label to its own line holds no other line */
            if (!pl->label_on_line[i] && vj >= fmin(v, b->y0) && vj <= fmax(v, b->y1))
                fail_msg("line '%s' runs between label '%s' and its line", guard_lines[j].label,
                         guard_lines[i].label);
        }
        if (pl->label_on_line[i])
            assert_true(v > b->y0 && v < b->y1);
    }
    tp_plot_layout_clear(&l);
}

/* Whether any point of the series, or of its segments sampled every 1/200 of the x axis, lies
 * inside box `b` (panel coordinates; a right-axis series against the right axis). */
static int hides(const tp_plot_layout *l, const tp_plot_panel_layout *pl, const tp_plot_series *s,
                 const tp_plot_box *b)
{
    double lo = s->right_axis ? pl->y2lo : pl->ylo, hi = s->right_axis ? pl->y2hi : pl->yhi;
    size_t i;
    int k;
    for (i = 0; i + 1 < s->n; i++) {
        for (k = 0; k < 200; k++) {
            double f = k / 200.0;
            double u = (s->x[i] + f * (s->x[i + 1] - s->x[i]) - l->xlo) / (l->xhi - l->xlo);
            double v = (s->y[i] + f * (s->y[i + 1] - s->y[i]) - lo) / (hi - lo);
            if (u > b->x0 && u < b->x1 && v > b->y0 && v < b->y1)
                return 1;
        }
    }
    return 0;
}

static void test_legend_hides_no_data_when_every_corner_has_some(void **state)
{
    /* Six labelled readings: lines along the top and bottom edges and curves through the
     * middle leave no corner free for a legend of six entries. The legend must then make room
     * (more columns, a taller axis) rather than cover a curve. */
    tp_plot_series s[] = {{"sensor detached", t_min, cold, N, 0, 0, 0},
                          {"heater open circuit", t_min, fall, N, 0, 0, 0},
                          {"switch stuck on (clipped)", t_min, ramp, N, 0, 0, 0},
                          {"heater at half power", t_min, half, N, 0, 0, 0},
                          {"sensor shorted (reads high) (clipped)", t_min, pinned_high, N, 0, 0, 0},
                          {"sensor open (reads low) (clipped)", t_min, pinned_low, N, 0, 0, 0}};
    tp_plot_panel panels[3] = {{"healthy (degC)", NULL, s + 3, 1, guard_lines, 3, 1.0},
                               {"faults from cold (degC)", NULL, s, 6, guard_lines, 3, 1.0},
                               {"faults from hold (degC)", NULL, s, 6, guard_lines, 3, 1.0}};
    tp_plot_chart chart = {"legend", "time (min)", panels, 3, 0, 1000};
    tp_plot_layout l;
    size_t p, i, k;
    (void)state;
    make_data();
    layout(&chart, &l);
    for (p = 1; p < 3; p++) {
        const tp_plot_panel_layout *pl = &l.panels[p];
        assert_true(pl->legend_columns >= 1);
        assert_true(pl->legend.x0 >= 0.0 && pl->legend.x1 <= 1.0 + 1e-9);
        assert_true(pl->legend.y0 >= 0.0 && pl->legend.y1 <= 1.0 + 1e-9);
        for (i = 0; i < 6; i++)
            if (hides(&l, pl, &s[i], &pl->legend))
                fail_msg("panel %zu: the legend hides '%s'", p + 1, s[i].label);
        /* nor does a reference line's label sit on the legend */
        for (k = 0; k < 3; k++)
            assert_false(overlap(&pl->labels[k], &pl->legend));
    }
    tp_plot_layout_clear(&l);
}

static void test_a_label_keeps_its_colour_in_every_panel(void **state)
{
    /* The same readings in two panels, after a first panel of one other series: with colours
     * by position, each would change colour from one panel to the next. */
    tp_plot_series top[] = {{"nominal", t_min, half, N, 0, 0, 0}};
    tp_plot_series a[] = {{"heater open circuit", t_min, fall, N, 0, 0, 0},
                          {"heater at half power", t_min, half, N, 0, 0, 0},
                          {"switch stuck on", t_min, ramp, N, 0, 0, 0}};
    tp_plot_series b[] = {{"heater at half power", t_min, half, N, 0, 0, 0},
                          {"switch stuck on", t_min, ramp, N, 0, 0, 0},
                          {"sensor open", t_min, pinned_low, N, 0, 0, 0}};
    tp_plot_panel panels[3] = {{"one", NULL, top, 1, NULL, 0, 1.0},
                               {"two", NULL, a, 3, NULL, 0, 1.0},
                               {"three", NULL, b, 3, NULL, 0, 1.0}};
    tp_plot_chart chart = {"colours", "time (min)", panels, 3, 0, 1000};
    tp_plot_layout l;
    (void)state;
    make_data();
    layout(&chart, &l);
    assert_int_equal(l.panels[2].colour[0], l.panels[1].colour[1]); /* heater at half power */
    assert_int_equal(l.panels[2].colour[1], l.panels[1].colour[2]); /* switch stuck on */
    /* distinct labels in one panel keep distinct colours */
    assert_int_not_equal(l.panels[1].colour[0], l.panels[1].colour[1]);
    assert_int_not_equal(l.panels[1].colour[1], l.panels[1].colour[2]);
    assert_int_not_equal(l.panels[2].colour[2], l.panels[2].colour[0]);
    assert_int_not_equal(l.panels[2].colour[2], l.panels[2].colour[1]);
    tp_plot_layout_clear(&l);
}

static void test_a_legend_with_a_free_corner_changes_nothing(void **state)
{
    /* One rising series leaves the lower right corner free: one column, and the axis keeps
     * its plain fit, the data range 20..90 padded by 5 % of it on each side (PLOT_PAD):
     * 16.5 to 93.5 (hand calculation). */
    tp_plot_series s[] = {{"reading", t_min, half, N, 0, 0, 0}};
    tp_plot_panel panel = {"reading (degC)", NULL, s, 1, NULL, 0, 1.0};
    tp_plot_chart chart = {"plain", "time (min)", &panel, 1, 0, 0};
    tp_plot_layout l;
    double lo = HUGE_VAL, hi = -HUGE_VAL;
    int i;
    (void)state;
    make_data();
    for (i = 0; i < N; i++) {
        lo = fmin(lo, half[i]);
        hi = fmax(hi, half[i]);
    }
    layout(&chart, &l);
    assert_int_equal(l.panels[0].legend_columns, 1);
    tp_check_abs("y low", l.panels[0].ylo, lo - 0.05 * (hi - lo), 1e-9);
    tp_check_abs("y high", l.panels[0].yhi, hi + 0.05 * (hi - lo), 1e-9);
    assert_false(hides(&l, &l.panels[0], &s[0], &l.panels[0].legend));
    tp_plot_layout_clear(&l);
}

static void test_marked_times_stay_clear_of_legend_and_labels(void **state)
{
    /* A reading held at 130 all along and one at 20 for the first half leave only the lower
     * right corner free of data, and the right end of a reference line at 50 degC free for its
     * label. A time marked near the right end puts its label there, along its line from the
     * bottom of the panel up: the legend must go elsewhere (and make room), and the reference
     * line's label too, both clear of the marked time's line and label. */
    static const tp_plot_hline mid[] = {{"fan on", 50.0}};
    static const tp_plot_vline marks[] = {{"surface ready 29 min", 29.0}, {"off the axis", 99.0}};
    tp_plot_series s[] = {{"pinned", t_min, pinned_high, N, 0, 0, 0},
                          {"cold start", t_min, cold, N / 2, 0, 0, 0}};
    tp_plot_panel panel = {"reading (degC)", NULL, s, 2, mid, 1, 1.0};
    tp_plot_chart chart = {"marks", "time (min)", &panel, 1, 0, 0};
    tp_plot_layout l;
    const tp_plot_panel_layout *pl;
    const tp_plot_box *m;
    double u;
    size_t i;
    tp_diag d;
    (void)state;
    make_data();
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_plot_chart_layout_marked("layout.png", &chart, marks, 2, &l, &d), TP_OK);
    pl = &l.panels[0];
    m = &l.marks[0];
    u = (29.0 - l.xlo) / (l.xhi - l.xlo);
    assert_true(m->x0 < m->x1 && m->y0 < m->y1);
    assert_true(m->x0 >= 0.0 && m->x1 <= 1.0 && m->y0 >= 0.0 && m->y1 <= 1.0);
    assert_true(l.marks[1].x0 > l.marks[1].x1); /* off the x axis: left out */
    assert_true(pl->legend_columns >= 1);
    if (overlap(&pl->legend, m))
        fail_msg("the legend covers the marked time's label");
    if (u >= pl->legend.x0 && u <= pl->legend.x1)
        fail_msg("the legend lies across the marked time");
    for (i = 0; i < 2; i++)
        if (hides(&l, pl, &s[i], &pl->legend))
            fail_msg("the legend hides '%s'", s[i].label);
    if (overlap(&pl->labels[0], m))
        fail_msg("the labels of the reference line and the marked time overlap");
    if (u >= pl->labels[0].x0 && u <= pl->labels[0].x1)
        fail_msg("the marked time runs through the reference line's label");
    tp_plot_layout_clear(&l);
}

/* The warm-up chart of a plate in a box (configs/enclosed-printer.yaml): nine temperatures
 * from 20 degC rising to 30 to 110 degC over an hour, two marked times near the middle. Its
 * legend once grew the temperature axis down to -33 degC, a third of the chart below the
 * data; at the height tp_figure_warmup_height gives nine curves the blank band below the
 * coldest curve stays under a third of the data's range (hand calculation: the data span
 * 20 to 110 degC, so the axis may start no lower than 20 - 30 = -10 degC). */
static void test_warmup_legend_of_many_curves_keeps_the_axis_near_the_data(void **state)
{
    static const double plateau[9] = {70.0, 108.0, 102.0, 97.0, 102.0, 40.0, 30.0, 95.0, 102.0};
    static const double tau[9] = {500.0, 400.0, 450.0, 480.0, 460.0, 900.0, 1500.0, 480.0, 470.0};
    static const char *const names[9] = {"wool", "pad", "plate", "glass", "sensor", "air",
                                         "walls", "surface (estimate)", "reading"};
    static const tp_plot_vline marks[] = {{"reading at setpoint 15 min 57 s", 16.0},
                                          {"surface ready 24 min 16 s", 24.3}};
    static double t[361], y[9][361], power[361];
    tp_plot_series s[9], p[1];
    tp_plot_hline setpoint = {"setpoint", 100.0};
    tp_plot_panel panels[2];
    tp_plot_chart chart;
    tp_plot_layout l;
    tp_diag d;
    int i, k;
    (void)state;
    for (i = 0; i < 361; i++) {
        t[i] = i / 6.0;
        power[i] = i < 96 ? 275.0 : 115.0;
        for (k = 0; k < 9; k++)
            y[k][i] = 20.0 + (plateau[k] - 20.0) * (1.0 - exp(-60.0 * t[i] / tau[k]));
    }
    for (k = 0; k < 9; k++)
        s[k] = (tp_plot_series){names[k], t, y[k], 361, k >= 7, 0, 0};
    p[0] = (tp_plot_series){"heater power", t, power, 361, 0, 0, 0};
    panels[0] = (tp_plot_panel){"temperature (degC)", NULL, s, 9, &setpoint, 1, 2.0};
    panels[1] = (tp_plot_panel){"power (W)", NULL, p, 1, NULL, 0, 1.0};
    chart = (tp_plot_chart){"enclosed", "time (min)", panels, 2, 0, tp_figure_warmup_height(9)};
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_plot_chart_layout_marked("layout.png", &chart, marks, 2, &l, &d), TP_OK);
    if (l.panels[0].ylo < -10.0)
        fail_msg("the legend grew the temperature axis down to %.1f degC", l.panels[0].ylo);
    assert_true(l.panels[0].legend_columns >= 1);
    for (k = 0; k < 9; k++)
        if (hides(&l, &l.panels[0], &s[k], &l.panels[0].legend))
            fail_msg("the legend hides '%s'", names[k]);
    tp_plot_layout_clear(&l);
}

static void test_legend_grows_a_panel_with_a_right_axis(void **state)
{
    /* A rising series on the left axis and a falling one on the right, crossing in the middle
     * (a sweep's holding power and margin): every corner holds data. Both axes grow alike, by
     * the same factor (hand calculation: the right axis spans 0.5 to 5.5 plus 5 % of that on
     * each side, the left 50 to 130 likewise), and the legend hides neither series. */
    static double x[11], power[11], margin[11];
    tp_plot_series s[] = {{"holding power", x, power, 11, 0, 0, 0},
                          {"margin", x, margin, 11, 1, 0, 1}};
    tp_plot_panel panel = {"holding power (W)", "margin (x)", s, 2, NULL, 0, 1.0};
    tp_plot_chart chart = {"right axis", "setpoint (degC)", &panel, 1, 0, 0};
    tp_plot_layout l;
    const tp_plot_panel_layout *pl;
    int i;
    (void)state;
    for (i = 0; i <= 10; i++) {
        x[i] = 60.0 + 5.0 * i;
        power[i] = 50.0 + 8.0 * i;
        margin[i] = 5.5 - 0.5 * i;
    }
    layout(&chart, &l);
    pl = &l.panels[0];
    assert_true(pl->legend_columns >= 1);
    if (hides(&l, pl, &s[0], &pl->legend) || hides(&l, pl, &s[1], &pl->legend))
        fail_msg("the legend hides a series");
    /* grown from the plain fits 46..134 and 0.25..5.75, both axes by one factor */
    assert_true((pl->yhi - pl->ylo) / 88.0 > 1.01);
    tp_check_rel("same growth", (pl->yhi - pl->ylo) / 88.0, (pl->y2hi - pl->y2lo) / 5.5, 1e-9);
    tp_plot_layout_clear(&l);
}

static void test_stacked_labels_keep_apart(void **state)
{
    /* Labels of lines a few units apart (a ceiling 7 K over the setpoint, a band 2 K under it,
     * the end of a rise check 39 K under it) on guard-like charts of three panels, for
     * setpoints from 60 to 250 degC and heights from 400 to 1200 pixels: two labels over one
     * another keep a fifth of a label's height between them (common practice, no source: text
     * closer than that reads as one label of two lines). */
    tp_plot_series s[] = {{"nominal", t_min, ramp, N, 0, 0, 0}};
    tp_plot_layout l;
    int h, c, i;
    size_t a, b;
    (void)state;
    make_data();
    for (h = 400; h <= 1200; h += 100)
        for (c = 0; c < 20; c++) {
            double sp = 60.0 + 10.0 * c;
            tp_plot_hline lines[] = {{"ceiling", sp + 7.0},
                                     {"setpoint", sp},
                                     {"hold band", sp - 2.0},
                                     {"rise check ends", sp - 39.0}};
            tp_plot_panel panels[3] = {{"healthy (degC)", NULL, s, 1, lines, 4, 1.0},
                                       {"from cold (degC)", NULL, s, 1, lines, 4, 1.0},
                                       {"from hold (degC)", NULL, s, 1, lines, 4, 1.0}};
            tp_plot_chart chart = {"labels", "time (min)", panels, 3, 1200, h};
            for (i = 0; i < N; i++)
                ramp[i] = fmin(20.0 + 40.0 * t_min[i], sp + 3.0);
            layout(&chart, &l);
            for (a = 0; a < 4; a++)
                for (b = a + 1; b < 4; b++) {
                    const tp_plot_box *p = &l.panels[0].labels[a], *q = &l.panels[0].labels[b];
                    double gap = fmax(q->y0 - p->y1, p->y0 - q->y1);
                    if (p->x0 < q->x1 && q->x0 < p->x1 && gap < 0.2 * (p->y1 - p->y0))
                        fail_msg("%d px, setpoint %g: labels '%s' and '%s' %.2f heights apart", h,
                                 sp, lines[a].label, lines[b].label, gap / (p->y1 - p->y0));
                }
            tp_plot_layout_clear(&l);
        }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_labels_of_close_lines_stay_apart),
        cmocka_unit_test(test_legend_hides_no_data_when_every_corner_has_some),
        cmocka_unit_test(test_a_label_keeps_its_colour_in_every_panel),
        cmocka_unit_test(test_a_legend_with_a_free_corner_changes_nothing),
        cmocka_unit_test(test_marked_times_stay_clear_of_legend_and_labels),
        cmocka_unit_test(test_legend_grows_a_panel_with_a_right_axis),
        cmocka_unit_test(test_warmup_legend_of_many_curves_keeps_the_axis_near_the_data),
        cmocka_unit_test(test_stacked_labels_keep_apart),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
