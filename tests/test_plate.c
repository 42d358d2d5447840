/* Tests of the physical lowering (plate.c): layer capacities and conductances worked by hand,
 * closed gaps, a physical config against a raw network written by hand for the same hardware,
 * and the validation messages of the physical form (FILE:LINE:COL, exit status). */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>

#include "assemble.h"
#include "config.h"
#include "history.h"
#include "integrate.h"
#include "tp_test.h"

#define T0C 273.15                 /* 0 degC in kelvin, K */
#define SIGMA 5.670374419e-8       /* Stefan-Boltzmann constant, CODATA 2018, W/(m2.K4) */
#define REL_EXACT 1.0e-12          /* relative tolerance of pure arithmetic on exact inputs
                                      (unit conversion and a few operations: ~1e-15) */


/* Three invented materials with round values, so every number below is a hand calculation. */
#define TEST_MATERIALS                                                                            \
    "materials:\n"                                                                                \
    "  soft:     {density: 2000 kg/m3, specific_heat: 1000 J/(kg.K), conductivity: 0.5 W/(m.K),\n" \
    "             emissivity: 0.9, max_temperature: 120 degC, source: test values}\n"             \
    "  spreader: {density: 2500 kg/m3, specific_heat: 800 J/(kg.K), conductivity: 100 W/(m.K),\n" \
    "             emissivity: 0.1, max_temperature: 300 degC, source: test values}\n"             \
    "  skin:     {density: 8000 kg/m3, specific_heat: 500 J/(kg.K), conductivity: 50 W/(m.K),\n"  \
    "             emissivity: 0.3, max_temperature: 300 degC, source: test values}\n"             \
    "  wool:     {density: 100 kg/m3, specific_heat: 800 J/(kg.K), conductivity: 0.05 W/(m.K),\n" \
    "             emissivity: 0.9, max_temperature: 300 degC, source: test values}\n"

/* A network lowered in-process from config text (tp_yaml_net); the caller closes it with
 * tp_yaml_net_close. */
static void lower(const char *text, tp_yaml_net *lw)
{
    if (tp_yaml_net_open(lw, text) != TP_OK) {
        print_error("%s", lw->diag.log);
        fail();
    }
}

static int node(const tp_yaml_net *lw, const char *id)
{
    int i = tp_network_find_node(lw->net, id);
    if (i < 0) {
        print_error("no node '%s'\n", id);
        fail();
    }
    return i;
}

/* The link with this label, or NULL. */
static const tp_net_link *link_named(const tp_yaml_net *lw, const char *label)
{
    int i;
    for (i = 0; i < lw->net->n_links; i++)
        if (strcmp(lw->net->links[i].label, label) == 0)
            return &lw->net->links[i];
    return NULL;
}

static const tp_net_link *must_link(const tp_yaml_net *lw, const char *label)
{
    const tp_net_link *l = link_named(lw, label);
    if (!l) {
        print_error("no link '%s'\n", label);
        fail();
    }
    return l;
}

/* Three layers, bottom to top: heat (soft, 2 mm, the bed's 200 x 100 mm), plate (spreader,
 * 5 mm, contact 2000 W/(m2.K)), sheet (skin, 1 mm, 150 x 80 mm centred, contact 500 W/(m2.K)). */
static const char stack_text[] =
    TEST_MATERIALS
    "room: {temperature: 20 degC}\n"
    "bed:\n"
    "  size: [200 mm, 100 mm]\n"
    "  layers:\n"
    "    - {id: heat,  material: soft,     thickness: 2 mm}\n"
    "    - {id: plate, material: spreader, thickness: 5 mm, contact: 2000 W/(m2.K)}\n"
    "    - {id: sheet, material: skin,     thickness: 1 mm, size: [150 mm, 80 mm],\n"
    "       contact: 500 W/(m2.K)}\n"
    "heater: {layer: heat, power: 50 W}\n";

/* Hand calculation, C = rho c_p A t (lumped capacitance, Incropera 7th ed. Eq. 5.7 from
 * memory) and R = t_i/(2 k_i A) + 1/(h_c A) + t_j/(2 k_j A) (plane walls and a contact
 * resistance in series, Incropera 7th ed. Eqs. 3.6 and 3.9, numbers from memory):
 *   heat:  2000 * 1000 * (0.2 * 0.1) * 0.002          = 80 J/K
 *   plate: 2500 * 800 * 0.02 * 0.005                  = 200 J/K
 *   sheet: 8000 * 500 * (0.15 * 0.08) * 0.001         = 48 J/K
 *   heat-plate, A = 0.02 m2:
 *     0.002/(2*0.5*0.02) + 1/(2000*0.02) + 0.005/(2*100*0.02) = 0.1 + 0.025 + 0.00125
 *     = 0.12625 K/W, G = 7.920792079... W/K
 *   plate-sheet, A = overlap = 0.15 * 0.08 = 0.012 m2:
 *     0.005/(2*100*0.012) + 1/(500*0.012) + 0.001/(2*50*0.012)
 *     = 0.00208333 + 0.16666667 + 0.00083333 = 0.16958333 K/W, G = 5.896805897... W/K
 *   exposed: plate top 0.02 - 0.012 = 0.008 m2; sheet top 0.012 m2; sheet edges
 *     2 (0.15 + 0.08) 0.001 = 0.00046 m2; the plate's bottom is covered by heat (no face). */
static void test_plate_stack_by_hand(void **state)
{
    tp_yaml_net lw;
    (void)state;
    lower(stack_text, &lw);
    tp_check_rel("C heat", lw.net->nodes[node(&lw, "heat")].capacity, 80.0, REL_EXACT);
    tp_check_rel("C plate", lw.net->nodes[node(&lw, "plate")].capacity, 200.0, REL_EXACT);
    tp_check_rel("C sheet", lw.net->nodes[node(&lw, "sheet")].capacity, 48.0, REL_EXACT);
    tp_check_rel("G heat-plate", must_link(&lw, "heat-plate")->g, 1.0 / 0.12625, REL_EXACT);
    tp_check_rel("G plate-sheet", must_link(&lw, "plate-sheet")->g,
                 1.0 / (0.005 / 2.4 + 1.0 / 6.0 + 0.001 / 1.2), REL_EXACT);
    tp_check_rel("A plate top", must_link(&lw, "plate top")->area, 0.008, REL_EXACT);
    tp_check_rel("A sheet top", must_link(&lw, "sheet top")->area, 0.012, REL_EXACT);
    tp_check_rel("A sheet edges", must_link(&lw, "sheet edges")->area, 0.00046, REL_EXACT);
    assert_null(link_named(&lw, "plate bottom"));
    assert_int_equal(lw.net->sources[0].nodes[0], node(&lw, "heat"));
    tp_yaml_net_close(&lw);
}

/* A middle layer smaller than both neighbours: base (soft, 2 mm), pad (skin, 1 mm,
 * 150 x 80 mm), plate (spreader, 5 mm, contact 2000 W/(m2.K)); no setpoint, so the gap air is
 * taken at (20 + 80)/2 = 50 degC (design temperature: room + 60 K).
 * Hand calculation:
 *   gap area: 0.2 * 0.1 - 0.15 * 0.08 = 0.008 m2, thickness 1 mm;
 *   k_air(323.15 K) by Sutherland's law, 0.0241 (T/273)^1.5 (273 + 194)/(T + 194) W/(m.K)
 *   (White, Viscous Fluid Flow, 3rd ed. 2006, p. 28, as in docs/correlations.md);
 *   gap conduction k_air A / t; gap radiation between parallel plates with
 *   eps = 1/(1/0.9 + 1/0.1 - 1) (Incropera 7th ed. Eq. 13.24, number from memory);
 *   base-pad (bonded), A = 0.012: 0.002/(2*0.5*0.012) + 0.001/(2*50*0.012) = 0.1675 K/W;
 *   pad-plate, A = 0.012: 0.001/1.2 + 1/24 + 0.005/2.4 = 0.04458333 K/W. */
static void test_plate_closed_gap_by_hand(void **state)
{
    static const char text[] =
        TEST_MATERIALS
        "room: {temperature: 20 degC}\n"
        "bed:\n"
        "  size: [200 mm, 100 mm]\n"
        "  layers:\n"
        "    - {id: base,  material: soft,     thickness: 2 mm}\n"
        "    - {id: pad,   material: skin,     thickness: 1 mm, size: [150 mm, 80 mm]}\n"
        "    - {id: plate, material: spreader, thickness: 5 mm, contact: 2000 W/(m2.K)}\n"
        "heater: {layer: pad, power: 50 W}\n";
    const double tf = T0C + 50.0;
    const double k_air = 0.0241 * pow(tf / 273.0, 1.5) * (273.0 + 194.0) / (tf + 194.0);
    tp_yaml_net lw;
    (void)state;
    lower(text, &lw);
    /* Sutherland's law reproduces itself to rounding; the air module may round constants
     * differently: 1e-9. */
    tp_check_rel("G gap", must_link(&lw, "base-plate air gap")->g, k_air * 0.008 / 0.001, 1.0e-9);
    tp_check_rel("A gap", must_link(&lw, "base-plate gap radiation")->area, 0.008, REL_EXACT);
    tp_check_rel("eps gap", must_link(&lw, "base-plate gap radiation")->eps,
                 1.0 / (1.0 / 0.9 + 1.0 / 0.1 - 1.0), REL_EXACT);
    tp_check_rel("G base-pad", must_link(&lw, "base-pad")->g, 1.0 / 0.1675, REL_EXACT);
    tp_check_rel("G pad-plate", must_link(&lw, "pad-plate")->g,
                 1.0 / (0.001 / 1.2 + 1.0 / 24.0 + 0.005 / 2.4), REL_EXACT);
    /* The gap covers the rest of the faces between base and plate, and the pad's edges face
     * the gap: none of them loses to the room. */
    assert_null(link_named(&lw, "base top"));
    assert_null(link_named(&lw, "plate bottom"));
    assert_null(link_named(&lw, "pad edges"));
    tp_yaml_net_close(&lw);
}

/* Integrate a lowered network and keep its history. */
static void simulate(tp_yaml_net *lw, tp_history *h)
{
    tp_integrate_opts o;
    tp_integrate_stats stats;
    assert_int_equal(tp_history_init(h, lw->net), TP_OK);
    tp_integrate_defaults(lw->net, &o);
    o.out = tp_history_record;
    o.user = h;
    if (tp_integrate(lw->net, &o, &stats, &lw->diag) != TP_OK) {
        print_error("%s", lw->diag.log);
        fail();
    }
}

/* The same hardware twice: a plate (spreader, 200 x 100 x 5 mm) under a centred sheet (skin,
 * 150 x 80 x 1 mm, contact 500 W/(m2.K)), 30 W into the plate, mounts 0.1 W/K, convection
 * switched off (losses.convection_scale: 0) so that only conduction, radiation and mounts
 * remain, which the raw form states exactly. The raw network is written from the formulas:
 *   C plate = 2500*800*0.02*0.005 = 200 J/K; C sheet = 8000*500*0.012*0.001 = 48 J/K;
 *   G plate-sheet = 1/(0.005/(2*100*0.012) + 1/(500*0.012) + 0.001/(2*50*0.012))
 *                 = 1/0.169583333 = 5.8968058968 W/K;
 *   radiation, gray surface to the room (Incropera 7th ed. Eq. 1.7, from memory):
 *     plate top, exposed 0.02 - 0.012 = 0.008 m2, the material's 0.1;
 *     plate bottom 0.02 m2, bottom emissivity 0.5;
 *     plate edges 2 (0.2 + 0.1) 0.005 = 0.003 m2, 0.1;
 *     sheet top 0.012 m2, top emissivity 0.8;
 *     sheet edges 2 (0.15 + 0.08) 0.001 = 0.00046 m2, the material's 0.3.
 * Requirement (issue 3): equal histories within 0.01 K; both run at rtol 1e-9, so the
 * integration error is far below that. */
static void test_plate_matches_raw_by_hand(void **state)
{
    static const char phys[] =
        TEST_MATERIALS
        "room: {temperature: 20 degC}\n"
        "bed:\n"
        "  size: [200 mm, 100 mm]\n"
        "  layers:\n"
        "    - {id: plate, material: spreader, thickness: 5 mm}\n"
        "    - {id: sheet, material: skin, thickness: 1 mm, size: [150 mm, 80 mm],\n"
        "       contact: 500 W/(m2.K)}\n"
        "  top: {emissivity: 0.8}\n"
        "  bottom: {emissivity: 0.5}\n"
        "  mounts: {conductance: 0.1 W/K}\n"
        "heater: {layer: plate, power: 30 W}\n"
        "losses: {convection_scale: 0}\n"
        "run: {duration: 40 min, step: 10 s, tolerance: 1e-9}\n";
    static const char raw[] =
        "network:\n"
        "  nodes:\n"
        "    - {id: plate, capacity: 200 J/K, initial: 20 degC}\n"
        "    - {id: sheet, capacity: 48 J/K, initial: 20 degC}\n"
        "    - {id: room, fixed: 20 degC}\n"
        "  links:\n"
        "    - {between: [plate, sheet], conductance: 5.8968058968 W/K}\n"
        "    - {between: [plate, room], radiation: {area: 0.008 m2, emissivity: 0.1}}\n"
        "    - {between: [plate, room], radiation: {area: 0.02 m2, emissivity: 0.5}}\n"
        "    - {between: [plate, room], radiation: {area: 0.003 m2, emissivity: 0.1}}\n"
        "    - {between: [sheet, room], radiation: {area: 0.012 m2, emissivity: 0.8}}\n"
        "    - {between: [sheet, room], radiation: {area: 0.00046 m2, emissivity: 0.3}}\n"
        "    - {between: [plate, room], conductance: 0.1 W/K}\n"
        "  sources:\n"
        "    - {id: heater, node: plate, power: 30 W}\n"
        "run: {duration: 40 min, step: 10 s, tolerance: 1e-9}\n";
    tp_yaml_net a, b;
    tp_history ha, hb;
    long i;
    int c;
    double worst = 0.0;
    (void)state;
    lower(phys, &a);
    lower(raw, &b);
    simulate(&a, &ha);
    simulate(&b, &hb);
    assert_int_equal(ha.n, hb.n);
    assert_int_equal(ha.n, 241); /* 40 min at 10 s, both ends */
    for (i = 0; i < ha.n; i++)
        for (c = 0; c < 2; c++)
            worst = fmax(worst, fabs(tp_history_temp(&ha, i, c) - tp_history_temp(&hb, i, c)));
    if (!(worst <= 0.01)) {
        print_error("largest difference %g K\n", worst);
        fail();
    }
    /* Not a vacuous match: the plate warmed by tens of kelvin. */
    assert_true(tp_history_temp(&ha, ha.n - 1, 0) > T0C + 60.0);
    tp_history_clear(&ha);
    tp_history_clear(&hb);
    tp_yaml_net_close(&a);
    tp_yaml_net_close(&b);
}

/* ---- validation messages, through the binary -------------------------------------------- */

typedef struct message_case {
    const char *name;     /* file name in the scratch directory */
    const char *yaml;     /* the config */
    const char *at;       /* text at the reported position (first occurrence) */
    const char *fragment; /* part of the message */
    int status;           /* expected exit status of `tepid check` */
} message_case;

/* Run `tepid check` on a case: exit status, "FILE:LINE:COL: " (+ "warning: " when status 0)
 * and the fragment on the same line. */
static void check_message(const message_case *mc)
{
    char path[TP_TEST_PATH], head[TP_TEST_PATH + 200];
    const char *args[] = {"check", path, NULL};
    const char *line_start;
    tp_run_result r;
    int line, col;
    tp_scratch_write(tp_group_scratch(), mc->name, mc->yaml, path);
    tp_run_tepid(tp_group_scratch(), args, &r);
    tp_text_locate(mc->yaml, mc->at, &line, &col);
    snprintf(head, sizeof head, "%s:%d:%d: %s", path, line, col, mc->status ? "" : "warning: ");
    line_start = strstr(r.err, head);
    if (r.status != mc->status || !line_start ||
        !strstr(line_start, mc->fragment) ||
        strchr(line_start, '\n') < strstr(line_start, mc->fragment)) {
        print_error("%s: status %d (expected %d)\nexpected '%s' ... '%s'\nstderr:\n%s",
                    mc->name, r.status, mc->status, head, mc->fragment, r.err);
        fail();
    }
    tp_run_clear(&r);
}

#define ROOM_BED "room: {temperature: 20 degC}\nbed:\n  size: [200 mm, 100 mm]\n"
#define PLATE_ONLY "  layers:\n    - {id: plate, material: spreader, thickness: 5 mm}\n"

/* Issue 3 item 6: a layer thicker than its plan size is an error at its thickness. */
static void test_plate_message_thick_layer(void **state)
{
    const message_case mc = {
        "thick.yaml",
        TEST_MATERIALS ROOM_BED
        "  layers:\n    - {id: plate, material: spreader, thickness: 120 mm}\n"
        "heater: {layer: plate, power: 50 W}\n",
        "120 mm", "layer 'plate' is thicker (120 mm) than its plan size (200 x 100 mm)", 2};
    (void)state;
    check_message(&mc);
}

/* Issue 3 item 6: a heater layer that does not exist, at heater.layer. */
static void test_plate_message_heater_layer(void **state)
{
    const message_case mc = {"heater.yaml",
                             TEST_MATERIALS ROOM_BED PLATE_ONLY
                             "heater: {layer: plates, power: 50 W}\n",
                             "plates, power", "the heater layer 'plates' does not exist", 2};
    (void)state;
    check_message(&mc);
}

/* Issue 3 item 6: a sensor host that does not exist, at sensor.layer. */
static void test_plate_message_sensor_host(void **state)
{
    const message_case mc = {
        "sensor.yaml",
        TEST_MATERIALS ROOM_BED PLATE_ONLY
        "heater: {layer: plate, power: 50 W}\n"
        "sensor: {layer: frame, coupling: 0.02 W/K, capacity: 0.3 J/K}\n",
        "frame", "the sensor's host layer 'frame' does not exist", 2};
    (void)state;
    check_message(&mc);
}

/* Issue 3 item 6: emissivity outside (0, 1]: above 1 on a face, 0 on a face, and above 1 in an
 * inline material; each at the value. */
static void test_plate_message_emissivity(void **state)
{
    const message_case cases[] = {
        {"eps-top.yaml",
         TEST_MATERIALS ROOM_BED PLATE_ONLY "  top: {emissivity: 1.2}\n"
         "heater: {layer: plate, power: 50 W}\n",
         "1.2}", "bed.top.emissivity: '1.2' is outside (0, 1]", 2},
        {"eps-bottom.yaml",
         TEST_MATERIALS ROOM_BED PLATE_ONLY "  bottom: {emissivity: 0}\n"
         "heater: {layer: plate, power: 50 W}\n",
         "0}\nheater", "bed.bottom.emissivity: '0' is outside (0, 1]", 2},
        {"eps-material.yaml",
         "materials:\n"
         "  dull: {density: 2700 kg/m3, specific_heat: 900 J/(kg.K), conductivity: 150 W/(m.K),\n"
         "         emissivity: 1.5, max_temperature: 200 degC, source: test values}\n" ROOM_BED
         "  layers:\n    - {id: plate, material: dull, thickness: 5 mm}\n"
         "heater: {layer: plate, power: 50 W}\n",
         "1.5", "materials.dull.emissivity: '1.5' is outside (0, 1]", 2},
    };
    size_t i;
    (void)state;
    for (i = 0; i < sizeof cases / sizeof cases[0]; i++)
        check_message(&cases[i]);
}

/* Issue 3 item 6: a setpoint above a layer material's service limit is a warning at the
 * setpoint naming the material, its layer and the limit (soft: 120 degC). A setpoint below
 * every limit gives no such warning. */
static void test_plate_message_service_limit(void **state)
{
#define LIMIT_YAML(sp)                                                                            \
    TEST_MATERIALS ROOM_BED                                                                       \
    "  layers:\n"                                                                                 \
    "    - {id: heat,  material: soft, thickness: 1 mm}\n"                                         \
    "    - {id: plate, material: spreader, thickness: 5 mm}\n"                                     \
    "heater: {layer: heat, power: 50 W}\n"                                                        \
    "sensor: {layer: plate, coupling: 0.02 W/K, capacity: 0.3 J/K}\n"                             \
    "control: {mode: on-off, setpoint: " sp "}\n"
    const message_case mc = {
        "limit.yaml", LIMIT_YAML("150 degC"), "150 degC",
        "the setpoint 150 degC is above the service limit of soft in layer 'heat' (120 degC)",
        0};
    char path[TP_TEST_PATH];
    const char *args[] = {"check", path, NULL};
    tp_run_result r;
    (void)state;
    check_message(&mc);
    tp_scratch_write(tp_group_scratch(), "limit-ok.yaml", LIMIT_YAML("110 degC"), path);
    tp_run_tepid(tp_group_scratch(), args, &r);
    assert_int_equal(r.status, 0);
    assert_null(strstr(r.err, "service limit"));
    tp_run_clear(&r);
#undef LIMIT_YAML
}

/* Issue 3 item 6: a lumped layer with Bi > 0.1 is a warning at the layer. With convection off
 * (convection_scale 0), the wool's only surface loss is radiation from its bottom face (its
 * top is covered by the plate), so by hand:
 *   h = eps sigma (T^2 + Ts^2)(T + Ts), T = 353.15 K (the setpoint), Ts = 293.15 K, eps 0.9
 *     = 6.948 W/(m2.K) (Incropera 7th ed. Eq. 1.9, from memory);
 *   L_c = V / A_s = (0.02 * 0.01) / (0.02 + 2 (0.2 + 0.1) 0.01) = 0.0076923 m, A_s the exposed
 *     surface, faces and edges (Incropera 7th ed. Eq. 5.10, from memory);
 *   Bi = h L_c / k = 6.948 * 0.0076923 / 0.05 = 1.069, printed to 2 figures: 1.1.
 * The aluminium-like plate (k 100) stays far below 0.1: no warning names it. */
static void test_plate_message_biot(void **state)
{
    const message_case mc = {
        "biot.yaml",
        TEST_MATERIALS ROOM_BED
        "  layers:\n"
        "    - {id: wool,  material: wool, thickness: 10 mm}\n"
        "    - {id: plate, material: spreader, thickness: 5 mm}\n"
        "heater: {layer: plate, power: 50 W}\n"
        "sensor: {layer: plate, coupling: 0.02 W/K, capacity: 0.3 J/K}\n"
        "control: {mode: on-off, setpoint: 80 degC}\n"
        "losses: {convection_scale: 0}\n",
        "{id: wool", "layer 'wool' (wool) has a Biot number of 1.1 > 0.1: it is not isothermal",
        0};
    tp_run_result r;
    char path[TP_TEST_PATH];
    const char *args[] = {"check", path, NULL};
    (void)state;
    check_message(&mc);
    tp_scratch_path(tp_group_scratch(), mc.name, path, sizeof path);
    tp_run_tepid(tp_group_scratch(), args, &r);
    assert_null(strstr(r.err, "layer 'plate' (spreader) has a Biot"));
    tp_run_clear(&r);
}

/* A contact on the bottom layer has nothing below it: a warning at the value, not silence. */
static void test_plate_message_bottom_contact(void **state)
{
    const message_case mc = {
        "contact.yaml",
        TEST_MATERIALS ROOM_BED
        "  layers:\n"
        "    - {id: plate, material: spreader, thickness: 5 mm, contact: 900 W/(m2.K)}\n"
        "heater: {layer: plate, power: 50 W}\n",
        "900 W", "the bottom layer 'plate' has no layer below; its contact is ignored", 0};
    (void)state;
    check_message(&mc);
}

/* A correlation outside its range (issue 3 item 3) is a warning at the layer whose face it is:
 * a 20 x 20 mm plate at 80 degC in 20 degC air has Ra on L = A/P = 5 mm of order 1e2 to 1e3,
 * below the 1e4 lower end of Incropera 7th ed. Eq. 9.30 (from memory). */
static void test_plate_message_correlation_range(void **state)
{
    const message_case mc = {"tiny.yaml",
                             TEST_MATERIALS
                             "room: {temperature: 20 degC}\nbed:\n  size: [20 mm, 20 mm]\n"
                             "  layers:\n    - {id: chip, material: spreader, thickness: 2 mm}\n"
                             "heater: {layer: chip, power: 5 W}\n",
                             "{id: chip", "chip top: at 80 degC, Ra = ", 0};
    (void)state;
    check_message(&mc);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_plate_stack_by_hand),
        cmocka_unit_test(test_plate_closed_gap_by_hand),
        cmocka_unit_test(test_plate_matches_raw_by_hand),
        cmocka_unit_test(test_plate_message_thick_layer),
        cmocka_unit_test(test_plate_message_heater_layer),
        cmocka_unit_test(test_plate_message_sensor_host),
        cmocka_unit_test(test_plate_message_emissivity),
        cmocka_unit_test(test_plate_message_service_limit),
        cmocka_unit_test(test_plate_message_biot),
        cmocka_unit_test(test_plate_message_bottom_contact),
        cmocka_unit_test(test_plate_message_correlation_range),
    };
    return cmocka_run_group_tests(tests, tp_scratch_group_setup, tp_scratch_group_teardown);
}
