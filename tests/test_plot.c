/* Tests of the plot module: files of the right format and size, atomic writes that leave
 * nothing behind on failure, input checks, and a clean standard output. Check values: the file
 * signatures and header fields come from each format's standard (the source is named beside
 * each check: ISO/IEC 15948 for PNG, ISO 32000-1 for PDF, SVG 1.1). */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <dirent.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include "plot.h"
#include "tp_test.h"

#define N_POINTS 301 /* samples of the synthetic warm-up, one per 6 s over 30 min */
#define MAP_NX 25    /* heat-map cells along x */
#define MAP_NY 21    /* heat-map cells along y */
#define CHILD_FLAG "--child-without-drivers"

/* The test directory, made by mkdtemp in the group setup and removed in the teardown. */
static char dir[64];

/* Synthetic input (invented scenario, not check values): a first-order warm-up from 20 degC
 * towards 110 degC with a 5 min time constant, a sensor lagging 0.5 min, a heater at 180 W that
 * drops to a holding power, and its duty. */
static double t_min[N_POINTS], plate[N_POINTS], sensor[N_POINTS], power[N_POINTS], duty[N_POINTS];
static double map_z[MAP_NX * MAP_NY];

static void make_data(void)
{
    size_t i, j;
    for (i = 0; i < N_POINTS; i++) {
        double t = 0.1 * (double)i;
        t_min[i] = t;
        plate[i] = 20.0 + 90.0 * (1.0 - exp(-t / 5.0));
        sensor[i] = 20.0 + 90.0 * (1.0 - exp(-fmax(t - 0.5, 0.0) / 5.0));
        power[i] = plate[i] < 100.0 ? 180.0 : 70.0;
        duty[i] = power[i] / 180.0;
    }
    for (j = 0; j < MAP_NY; j++)
        for (i = 0; i < MAP_NX; i++) {
            double x = ((double)i + 0.5) * 10.0 - 125.0, y = ((double)j + 0.5) * 10.0 - 105.0;
            map_z[j * MAP_NX + i] = 95.0 - 0.001 * (x * x + y * y);
        }
}

static const tp_plot_hline setpoint[] = {{"setpoint 100 degC", 100.0}};

/* The two-panel warm-up chart of the brief: temperatures with a setpoint line; power, and duty
 * on a right axis. The chart points into the fixture: use it in place. */
typedef struct chart_fixture {
    tp_plot_chart chart;
    tp_plot_panel panels[2];
    tp_plot_series series[4];
} chart_fixture;

static void make_chart(chart_fixture *f)
{
    tp_plot_series s[4] = {
        {"plate", t_min, plate, N_POINTS, 0, 0, 0},
        {"sensor", t_min, sensor, N_POINTS, 1, 0, 0},
        {"heater power", t_min, power, N_POINTS, 0, 0, 0},
        {"duty", t_min, duty, N_POINTS, 2, 0, 1},
    };
    memset(f, 0, sizeof *f);
    memcpy(f->series, s, sizeof s);
    f->panels[0].ylabel = "temperature (degC)";
    f->panels[0].series = &f->series[0];
    f->panels[0].n_series = 2;
    f->panels[0].hlines = setpoint;
    f->panels[0].n_hlines = 1;
    f->panels[0].height_share = 2.0;
    f->panels[1].ylabel = "power (W)";
    f->panels[1].y2label = "duty (-)";
    f->panels[1].series = &f->series[2];
    f->panels[1].n_series = 2;
    f->chart.title = "Warm-up of a test plate";
    f->chart.xlabel = "time (min)";
    f->chart.panels = f->panels;
    f->chart.n_panels = 2;
}

static void make_map(tp_plot_map *map)
{
    static const double mx[] = {125.0, 5.0}, my[] = {105.0, 5.0};
    static const char *const ml[] = {"sensor", "coldest"};
    memset(map, 0, sizeof *map);
    map->title = "Working surface";
    map->xlabel = "x (mm)";
    map->ylabel = "y (mm)";
    map->zlabel = "surface temperature (degC)";
    map->z = map_z;
    map->nx = MAP_NX;
    map->ny = MAP_NY;
    map->x0 = 0.0;
    map->x1 = 250.0;
    map->y0 = 0.0;
    map->y1 = 210.0;
    map->contours = 1;
    map->mark_x = mx;
    map->mark_y = my;
    map->mark_label = ml;
    map->n_marks = 2;
}

/* ---- file helpers ------------------------------------------------------------------------ */

static void path_in_dir(char *out, size_t size, const char *name)
{
    int n = snprintf(out, size, "%s/%s", dir, name);
    assert_true(n > 0 && (size_t)n < size);
}

/* Read up to `size` bytes of `path`; returns the count, or -1 when it cannot be opened. */
static long read_head(const char *path, unsigned char *buf, size_t size)
{
    FILE *fp = fopen(path, "rb");
    size_t n;
    if (!fp)
        return -1;
    n = fread(buf, 1, size, fp);
    fclose(fp);
    return (long)n;
}

static int file_exists(const char *path)
{
    struct stat st;
    return stat(path, &st) == 0;
}

/* Temporary files of tp_outfile_reserve are named ".<basename>.XXXXXX<ext>" beside the target
 * (src/base/outfile.c): none may be left in the test directory after a write. */
static void assert_no_temp_files(const char *base)
{
    char prefix[128];
    struct dirent *e;
    DIR *dp = opendir(dir);
    snprintf(prefix, sizeof prefix, ".%s.", base);
    assert_non_null(dp);
    while ((e = readdir(dp)) != NULL) {
        if (strncmp(e->d_name, prefix, strlen(prefix)) == 0)
            fail_msg("temporary file left behind: %s", e->d_name);
    }
    closedir(dp);
}

/* PNG signature: PNG specification (W3C 2nd ed. = ISO/IEC 15948:2003), section 5.2. */
static const unsigned char png_signature[8] = {0x89, 0x50, 0x4E, 0x47, 0x0D, 0x0A, 0x1A, 0x0A};

static uint32_t be32(const unsigned char *p)
{
    return (uint32_t)p[0] << 24 | (uint32_t)p[1] << 16 | (uint32_t)p[2] << 8 | (uint32_t)p[3];
}

/* A PNG whose IHDR says width x height. PNG specification sections 5.2-5.3 and 11.2.2: the
 * 8-byte signature, then the first chunk (length 4 bytes, type "IHDR" 4 bytes at offset 12),
 * whose data starts with width (offset 16) and height (offset 20), 4-byte big-endian each. */
static void assert_png(const char *path, uint32_t width, uint32_t height)
{
    unsigned char b[24];
    assert_int_equal(read_head(path, b, sizeof b), 24);
    assert_memory_equal(b, png_signature, sizeof png_signature);
    assert_memory_equal(b + 12, "IHDR", 4);
    assert_int_equal(be32(b + 16), width);
    assert_int_equal(be32(b + 20), height);
}

/* Point standard output at a new file `path`; returns the saved descriptor. */
static int stdout_to_file(const char *path)
{
    int fd, saved;
    fflush(stdout);
    fd = open(path, O_WRONLY | O_CREAT | O_TRUNC, 0644);
    assert_true(fd >= 0);
    saved = dup(STDOUT_FILENO);
    assert_true(saved >= 0 && dup2(fd, STDOUT_FILENO) >= 0);
    close(fd);
    return saved;
}

static void stdout_back(int saved)
{
    fflush(stdout);
    dup2(saved, STDOUT_FILENO);
    close(saved);
}

/* ---- fixtures ---------------------------------------------------------------------------- */

static int group_setup(void **state)
{
    (void)state;
    strcpy(dir, "/tmp/tepid-test-plot-XXXXXX");
    if (!mkdtemp(dir))
        return -1;
    make_data();
    return 0;
}

/* Remove the group's directory and everything under it. */
static int group_teardown(void **state)
{
    (void)state;
    tp_remove_tree(dir);
    return access(dir, F_OK) == 0 ? -1 : 0; /* the directory must be gone */
}

static int unset_driver_dir(void **state)
{
    (void)state;
    return unsetenv("PLPLOT_DRV_DIR");
}

/* ---- charts ------------------------------------------------------------------------------ */

static void test_chart_png_default_size(void **state)
{
    chart_fixture f;
    char path[256];
    tp_diag d;
    (void)state;
    tp_diag_init(&d, NULL);
    make_chart(&f);
    path_in_dir(path, sizeof path, "chart.png");
    assert_int_equal(tp_plot_chart_write(path, &f.chart, &d), TP_OK);
    /* 1200 x 800: the default chart size of the plot API (width = height = 0) */
    assert_png(path, 1200, 800);
    assert_int_equal(d.errors, 0);
    assert_int_equal(d.warnings, 0);
    assert_no_temp_files("chart.png");
}

static void test_chart_png_requested_size(void **state)
{
    chart_fixture f;
    char path[256];
    tp_diag d;
    (void)state;
    tp_diag_init(&d, NULL);
    make_chart(&f);
    f.chart.width = 640; /* an arbitrary size other than the default */
    f.chart.height = 480;
    path_in_dir(path, sizeof path, "small.png");
    assert_int_equal(tp_plot_chart_write(path, &f.chart, &d), TP_OK);
    assert_png(path, 640, 480);
    assert_no_temp_files("small.png");
}

static void test_chart_svg_root_element(void **state)
{
    chart_fixture f;
    unsigned char b[1024];
    char path[256];
    long n;
    tp_diag d;
    (void)state;
    tp_diag_init(&d, NULL);
    make_chart(&f);
    path_in_dir(path, sizeof path, "chart.svg");
    assert_int_equal(tp_plot_chart_write(path, &f.chart, &d), TP_OK);
    n = read_head(path, b, sizeof b - 1);
    assert_true(n > 0);
    b[n] = '\0';
    /* an SVG file is XML text (a markup declaration or element first: XML 1.0, section 2.8)
     * whose root element is <svg> (W3C SVG 1.1, section 5.1) */
    assert_int_equal(b[0], '<');
    assert_non_null(strstr((const char *)b, "<svg"));
    assert_no_temp_files("chart.svg");
}

static void test_chart_pdf_header(void **state)
{
    chart_fixture f;
    unsigned char b[8];
    char path[256];
    tp_diag d;
    (void)state;
    tp_diag_init(&d, NULL);
    make_chart(&f);
    path_in_dir(path, sizeof path, "chart.pdf");
    assert_int_equal(tp_plot_chart_write(path, &f.chart, &d), TP_OK);
    /* a PDF file starts with the header "%PDF-" and a version: ISO 32000-1:2008, 7.5.2 */
    assert_int_equal(read_head(path, b, sizeof b), (long)sizeof b);
    assert_memory_equal(b, "%PDF-", 5);
    assert_no_temp_files("chart.pdf");
}

static void test_chart_extension_case_insensitive(void **state)
{
    chart_fixture f;
    char path[256];
    tp_diag d;
    (void)state;
    tp_diag_init(&d, NULL);
    make_chart(&f);
    path_in_dir(path, sizeof path, "upper.PNG");
    assert_int_equal(tp_plot_chart_write(path, &f.chart, &d), TP_OK);
    assert_png(path, 1200, 800); /* default size, as above */
    assert_no_temp_files("upper.PNG");
}

static void test_chart_nonfinite_points_skipped(void **state)
{
    static double x[6] = {0.0, 1.0, 2.0, 3.0, 4.0, 5.0};
    double y[6] = {20.0, 30.0, 0.0, 45.0, 50.0, 0.0};
    tp_plot_series s = {"with gaps", x, y, 6, 0, 0, 0};
    tp_plot_panel p = {"temperature (degC)", NULL, &s, 1, NULL, 0, 0.0};
    tp_plot_chart c = {"gaps", "time (min)", &p, 1, 0, 0};
    char path[256];
    tp_diag d;
    (void)state;
    y[2] = (double)NAN;
    y[5] = (double)INFINITY;
    tp_diag_init(&d, NULL);
    path_in_dir(path, sizeof path, "gaps.png");
    assert_int_equal(tp_plot_chart_write(path, &c, &d), TP_OK);
    assert_png(path, 1200, 800); /* default size, as above */
    /* two of six points are not finite: one warning naming the count */
    assert_int_equal(d.warnings, 1);
    assert_non_null(strstr(d.log, "2 non-finite points"));
}

static void test_chart_degenerate_ranges_widened(void **state)
{
    /* one point and a reference line at the same height: zero x and y ranges */
    static const double x[1] = {3.0}, y[1] = {50.0};
    tp_plot_series s = {"single", x, y, 1, 0, 1, 0};
    tp_plot_hline h = {"limit", 50.0};
    tp_plot_panel p = {"temperature (degC)", NULL, &s, 1, &h, 1, 0.0};
    tp_plot_chart c = {NULL, NULL, &p, 1, 0, 0};
    char path[256];
    tp_diag d;
    (void)state;
    tp_diag_init(&d, NULL);
    path_in_dir(path, sizeof path, "flat.png");
    assert_int_equal(tp_plot_chart_write(path, &c, &d), TP_OK);
    assert_png(path, 1200, 800); /* default size, as above */
}

static void test_chart_bad_input_rejected(void **state)
{
    chart_fixture f;
    double nan_y[2];
    char path[256];
    tp_diag d;
    (void)state;
    nan_y[0] = (double)NAN;
    nan_y[1] = (double)NAN;
    path_in_dir(path, sizeof path, "bad.png");

    make_chart(&f);
    f.series[1].y = NULL; /* missing array */
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_plot_chart_write(path, &f.chart, &d), TP_ERR_USAGE);
    assert_non_null(strstr(d.log, "missing x or y array"));

    make_chart(&f);
    f.series[0].n = 0; /* no points */
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_plot_chart_write(path, &f.chart, &d), TP_ERR_USAGE);

    make_chart(&f);
    f.series[1].right_axis = 1; /* panel 1 has no y2label */
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_plot_chart_write(path, &f.chart, &d), TP_ERR_USAGE);

    make_chart(&f);
    f.panels[1].n_series = 1; /* panel 2 keeps only "heater power" ... */
    f.series[2].y = nan_y;    /* ... with nothing finite in it */
    f.series[2].n = 2;
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_plot_chart_write(path, &f.chart, &d), TP_ERR_USAGE);
    assert_non_null(strstr(d.log, "nothing finite"));

    make_chart(&f);
    f.panels[0].height_share = -1.0;
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_plot_chart_write(path, &f.chart, &d), TP_ERR_USAGE);

    make_chart(&f);
    f.chart.width = 50; /* below TP_PLOT_SIZE_MIN */
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_plot_chart_write(path, &f.chart, &d), TP_ERR_USAGE);

    make_chart(&f);
    f.chart.n_panels = 0;
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_plot_chart_write(path, &f.chart, &d), TP_ERR_USAGE);

    assert_false(file_exists(path));
    assert_no_temp_files("bad.png");
}

/* ---- failures leave nothing behind ------------------------------------------------------- */

static void test_chart_unknown_extension_writes_nothing(void **state)
{
    chart_fixture f;
    char path[256];
    tp_diag d;
    (void)state;
    tp_diag_init(&d, NULL);
    make_chart(&f);
    path_in_dir(path, sizeof path, "chart.bmp");
    assert_int_equal(tp_plot_chart_write(path, &f.chart, &d), TP_ERR_USAGE);
    assert_false(file_exists(path));
    assert_no_temp_files("chart.bmp");
    /* the message names the allowed formats */
    assert_non_null(strstr(d.log, ".png .svg .pdf"));
}

static void test_chart_missing_directory_writes_nothing(void **state)
{
    chart_fixture f;
    char path[256], sub[256];
    tp_diag d;
    (void)state;
    tp_diag_init(&d, NULL);
    make_chart(&f);
    path_in_dir(sub, sizeof sub, "no-such-dir");
    path_in_dir(path, sizeof path, "no-such-dir/chart.png");
    assert_int_equal(tp_plot_chart_write(path, &f.chart, &d), TP_ERR_IO);
    assert_false(file_exists(path));
    assert_false(file_exists(sub));
    assert_int_equal(d.errors, 1);
}

static void test_map_missing_directory_writes_nothing(void **state)
{
    tp_plot_map map;
    char path[256];
    tp_diag d;
    (void)state;
    tp_diag_init(&d, NULL);
    make_map(&map);
    path_in_dir(path, sizeof path, "no-such-dir/map.png");
    assert_int_equal(tp_plot_map_write(path, &map, &d), TP_ERR_IO);
    assert_false(file_exists(path));
}

static const unsigned char old_bytes[] = "previous figure, must survive";

static void write_old_target(const char *path)
{
    FILE *fp = fopen(path, "wb");
    assert_non_null(fp);
    assert_int_equal(fwrite(old_bytes, 1, sizeof old_bytes, fp), sizeof old_bytes);
    assert_int_equal(fclose(fp), 0);
}

static void assert_old_target(const char *path)
{
    unsigned char b[sizeof old_bytes + 8];
    assert_int_equal(read_head(path, b, sizeof b), (long)sizeof old_bytes);
    assert_memory_equal(b, old_bytes, sizeof old_bytes);
}

static void test_chart_failure_keeps_existing_target(void **state)
{
    chart_fixture f;
    char path[256];
    tp_diag d;
    (void)state;
    path_in_dir(path, sizeof path, "keep.png");
    write_old_target(path);
    make_chart(&f);
    f.series[0].x = NULL;
    tp_diag_init(&d, NULL);
    assert_int_not_equal(tp_plot_chart_write(path, &f.chart, &d), TP_OK);
    assert_old_target(path);
    assert_no_temp_files("keep.png");
}

/* The child half of the next test, in a fresh process (PLplot keeps its driver table for the
 * life of a process): PLplot without drivers fails after the temporary file was reserved. */
static int child_without_drivers(const char *path)
{
    chart_fixture f;
    tp_diag d;
    make_data();
    make_chart(&f);
    tp_diag_init(&d, NULL);
    if (setenv("PLPLOT_DRV_DIR", "/nonexistent/tepid-plplot-drivers", 1) != 0)
        return 100;
    return (int)tp_plot_chart_write(path, &f.chart, &d);
}

static void test_chart_drawing_failure_keeps_existing_target(void **state)
{
    char path[256], out[256];
    unsigned char b[64];
    pid_t pid;
    int status, fd;
    (void)state;
    path_in_dir(path, sizeof path, "keep2.png");
    path_in_dir(out, sizeof out, "child-stdout.txt");
    write_old_target(path);
    fflush(NULL);
    pid = fork();
    assert_true(pid >= 0);
    if (pid == 0) {
        fd = open(out, O_WRONLY | O_CREAT | O_TRUNC, 0644);
        if (fd < 0 || dup2(fd, STDOUT_FILENO) < 0)
            _exit(101);
        execl("/proc/self/exe", "test_plot", CHILD_FLAG, path, (char *)NULL);
        _exit(102);
    }
    assert_int_equal(waitpid(pid, &status, 0), pid);
    assert_true(WIFEXITED(status));
    assert_int_equal(WEXITSTATUS(status), TP_ERR_IO);
    assert_old_target(path);
    assert_no_temp_files("keep2.png");
    /* nothing reached standard output, although PLplot complained */
    assert_int_equal(read_head(out, b, sizeof b), 0);
}

static void test_chart_plplot_fatal_error_recovered(void **state)
{
    chart_fixture f;
    char path[256], drivers[256], info[256], out[256];
    unsigned char b[64];
    FILE *fp;
    int saved;
    tp_status st;
    tp_diag d;
    (void)state;
    /* A driver table that lists pngcairo in a library that does not exist: plinit fails to
     * load it and calls plexit, which would end the process with exit(1). The fields are
     * PLplot's own driver_info format (device:menu text:interactive:library:sequence:tag). */
    path_in_dir(drivers, sizeof drivers, "fake-drivers");
    assert_int_equal(mkdir(drivers, 0755), 0);
    path_in_dir(info, sizeof info, "fake-drivers/cairo.driver_info");
    fp = fopen(info, "w");
    assert_non_null(fp);
    fputs("pngcairo:missing PNG driver:0:cairo:105:pngcairo\n", fp);
    assert_int_equal(fclose(fp), 0);
    path_in_dir(path, sizeof path, "keep3.png");
    path_in_dir(out, sizeof out, "stdout-fatal.txt");
    write_old_target(path);
    make_chart(&f);
    tp_diag_init(&d, NULL);

    assert_int_equal(setenv("PLPLOT_DRV_DIR", drivers, 1), 0);
    saved = stdout_to_file(out);
    st = tp_plot_chart_write(path, &f.chart, &d);
    stdout_back(saved);
    assert_int_equal(unsetenv("PLPLOT_DRV_DIR"), 0);

    /* still running, with a status and PLplot's reason */
    assert_int_equal(st, TP_ERR_IO);
    assert_non_null(strstr(d.log, "PLplot"));
    assert_old_target(path);
    assert_no_temp_files("keep3.png");
    assert_int_equal(read_head(out, b, sizeof b), 0);
    /* and PLplot works again for the next figure of the process */
    assert_int_equal(tp_plot_chart_write(path, &f.chart, &d), TP_OK);
    assert_png(path, 1200, 800); /* default size, as above */
    assert_no_temp_files("keep3.png");
}

static void test_chart_stdout_untouched(void **state)
{
    chart_fixture f;
    tp_plot_map map;
    char path[256], mpath[256], out[256];
    unsigned char b[64];
    int saved;
    tp_status st1, st2;
    tp_diag d;
    (void)state;
    make_chart(&f);
    make_map(&map);
    path_in_dir(path, sizeof path, "quiet.png");
    path_in_dir(mpath, sizeof mpath, "quiet-map.svg");
    path_in_dir(out, sizeof out, "stdout.txt");
    tp_diag_init(&d, NULL);
    saved = stdout_to_file(out);
    st1 = tp_plot_chart_write(path, &f.chart, &d);
    st2 = tp_plot_map_write(mpath, &map, &d);
    stdout_back(saved);
    assert_int_equal(st1, TP_OK);
    assert_int_equal(st2, TP_OK);
    assert_int_equal(read_head(out, b, sizeof b), 0);
}

/* ---- heat maps --------------------------------------------------------------------------- */

static void test_map_png_with_markers(void **state)
{
    tp_plot_map map;
    char path[256];
    tp_diag d;
    (void)state;
    tp_diag_init(&d, NULL);
    make_map(&map);
    path_in_dir(path, sizeof path, "map.png");
    assert_int_equal(tp_plot_map_write(path, &map, &d), TP_OK);
    /* 1000 x 800: the default map size of the plot API */
    assert_png(path, 1000, 800);
    assert_int_equal(d.errors + d.warnings, 0);
    assert_no_temp_files("map.png");
}

static void test_map_single_row(void **state)
{
    static const double z[4] = {30.0, 40.0, 50.0, 40.0};
    tp_plot_map map;
    char path[256];
    tp_diag d;
    (void)state;
    tp_diag_init(&d, NULL);
    memset(&map, 0, sizeof map);
    map.z = z;
    map.nx = 4;
    map.ny = 1; /* a strip: contours need two rows and are left out */
    map.x0 = 0.0;
    map.x1 = 100.0;
    map.y0 = 0.0;
    map.y1 = 0.0; /* zero height: widened */
    map.contours = 1;
    path_in_dir(path, sizeof path, "strip.png");
    assert_int_equal(tp_plot_map_write(path, &map, &d), TP_OK);
    assert_png(path, 1000, 800); /* default map size, as above */
}

static void test_map_marker_off_the_map_left_out(void **state)
{
    static const double mx[2] = {125.0, 900.0}, my[2] = {105.0, 105.0};
    static const char *const ml[2] = {"sensor", "far away"};
    tp_plot_map map;
    char path[256];
    tp_diag d;
    (void)state;
    tp_diag_init(&d, NULL);
    make_map(&map);
    map.mark_x = mx; /* x = 900 mm on a 250 mm plate */
    map.mark_y = my;
    map.mark_label = ml;
    path_in_dir(path, sizeof path, "offmap.png");
    assert_int_equal(tp_plot_map_write(path, &map, &d), TP_OK);
    assert_int_equal(d.warnings, 1);
    assert_non_null(strstr(d.log, "far away"));
}

static void test_map_bad_input_rejected(void **state)
{
    tp_plot_map map;
    char path[256];
    tp_diag d;
    (void)state;
    path_in_dir(path, sizeof path, "badmap.png");

    make_map(&map);
    map.x1 = -1.0; /* x1 < x0 */
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_plot_map_write(path, &map, &d), TP_ERR_USAGE);

    make_map(&map);
    map.z = NULL;
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_plot_map_write(path, &map, &d), TP_ERR_USAGE);

    make_map(&map);
    map.nx = TP_PLOT_CELLS_MAX; /* TP_PLOT_CELLS_MAX x 21 cells: over the bound */
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_plot_map_write(path, &map, &d), TP_ERR_LIMIT);

    make_map(&map);
    map.mark_y = NULL;
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_plot_map_write(path, &map, &d), TP_ERR_USAGE);

    make_map(&map);
    tp_diag_init(&d, NULL);
    path_in_dir(path, sizeof path, "map.gif");
    assert_int_equal(tp_plot_map_write(path, &map, &d), TP_ERR_USAGE);
    assert_false(file_exists(path));

    path_in_dir(path, sizeof path, "badmap.png");
    assert_false(file_exists(path));
    assert_no_temp_files("badmap.png");
}

/* ---- title wrapping and label placement ------------------------------------------------- */

/* Characters (not bytes) of a UTF-8 string. */
static size_t utf8_chars(const char *s)
{
    size_t n = 0;
    for (; *s; s++)
        n += ((unsigned char)*s & 0xC0) != 0x80;
    return n;
}

static void test_wrap_title_short_and_empty(void **state)
{
    char lines[TP_PLOT_TITLE_LINES][TP_PLOT_LINE_BYTES];
    (void)state;
    assert_int_equal(tp_plot_wrap_title("Warm-up", 40, 2, lines), 1);
    assert_string_equal(lines[0], "Warm-up");
    /* surrounding blanks dropped, control characters read as blanks */
    assert_int_equal(tp_plot_wrap_title("  a\tb  ", 40, 2, lines), 1);
    assert_string_equal(lines[0], "a b");
    assert_int_equal(tp_plot_wrap_title("", 40, 2, lines), 0);
    assert_int_equal(tp_plot_wrap_title("   ", 40, 2, lines), 0);
    assert_int_equal(tp_plot_wrap_title(NULL, 40, 2, lines), 0);
}

/* Prose wraps at blanks: every line within the width, nothing lost (the lines joined by one
 * blank give the title back). The break goes at the last blank that fits: by hand, width 30
 * puts "a 24 V build plate with a" (25 characters; adding " silicone" would make 34) first. */
static void test_wrap_title_prose_at_blanks(void **state)
{
    static const char title[] = "a 24 V build plate with a silicone pad and cork";
    char lines[TP_PLOT_TITLE_LINES][TP_PLOT_LINE_BYTES], joined[2 * TP_PLOT_LINE_BYTES + 2];
    int n;
    (void)state;
    n = tp_plot_wrap_title(title, 30, 2, lines);
    assert_int_equal(n, 2);
    assert_string_equal(lines[0], "a 24 V build plate with a");
    assert_true(strlen(lines[0]) <= 30 && strlen(lines[1]) <= 30);
    snprintf(joined, sizeof joined, "%s %s", lines[0], lines[1]);
    assert_string_equal(joined, title);
}

/* A path too long for two lines: the second keeps its start and its end (the file name) and
 * loses its middle to one ellipsis character; no line is wider than asked. */
static void test_wrap_title_long_path_shortened(void **state)
{
    static const char title[] = "plate: fit to /tmp/a-rather-long-directory-name/for-measured-logs/"
                                "from-the-bench/workshop-bed-24v-log.csv";
    char lines[TP_PLOT_TITLE_LINES][TP_PLOT_LINE_BYTES];
    const char *tail = "workshop-bed-24v-log.csv";
    size_t len;
    (void)state;
    assert_int_equal(tp_plot_wrap_title(title, 40, 2, lines), 2);
    assert_true(utf8_chars(lines[0]) <= 40);
    assert_true(utf8_chars(lines[1]) <= 40);
    assert_non_null(strstr(lines[1], "\xe2\x80\xa6"));
    len = strlen(lines[1]);
    assert_true(len > strlen(tail) && strcmp(lines[1] + len - strlen(tail), tail) == 0);
    /* One line only: the same shortening on the whole title. */
    assert_int_equal(tp_plot_wrap_title(title, 40, 1, lines), 1);
    assert_true(utf8_chars(lines[0]) <= 40);
    assert_int_equal(strncmp(lines[0], "plate: fit", 10), 0);
}

/* A word longer than a line is cut inside (a path without slashes); multi-byte characters
 * are never split. */
static void test_wrap_title_long_word_and_utf8(void **state)
{
    char lines[TP_PLOT_TITLE_LINES][TP_PLOT_LINE_BYTES];
    char word[64];
    size_t k;
    (void)state;
    memset(word, 'x', 30);
    word[30] = '\0';
    assert_int_equal(tp_plot_wrap_title(word, 10, 2, lines), 2);
    assert_int_equal(strlen(lines[0]), 10);
    assert_true(utf8_chars(lines[1]) <= 10);
    /* "°C " repeated: 3 characters, 4 bytes each time. */
    word[0] = '\0';
    for (k = 0; k < 8; k++)
        strcat(word, "\xc2\xb0"
                     "C ");
    assert_int_equal(tp_plot_wrap_title(word, 10, 2, lines), 2);
    for (k = 0; k < 2; k++) {
        const unsigned char *p = (const unsigned char *)lines[k];
        assert_true(utf8_chars(lines[k]) <= 10);
        for (; *p; p++) /* no lead byte without its continuation */
            if (*p == 0xc2)
                assert_int_equal(p[1], 0xb0);
    }
}

static double box_overlap_area(const tp_plot_label *a, const tp_plot_label *b)
{
    double w = fmin(a->x0 + a->w, b->x0 + b->w) - fmax(a->x0, b->x0);
    double h = fmin(a->y0 + a->h, b->y0 + b->h) - fmax(a->y0, b->y0);
    return w > 0 && h > 0 ? w * h : 0.0;
}

/* No two boxes overlap, no box covers a marker (a square of half-side gap), every box inside the
 * frame [0, 100] x [0, 80]. */
static void assert_clean_placement(const tp_plot_label *l, size_t n, double gap)
{
    size_t i, j;
    for (i = 0; i < n; i++) {
        assert_true(l[i].x0 >= 0.0 && l[i].x0 + l[i].w <= 100.0);
        assert_true(l[i].y0 >= 0.0 && l[i].y0 + l[i].h <= 80.0);
        for (j = 0; j < n; j++) {
            tp_plot_label mark = {0, 0, 2 * gap, 2 * gap, l[j].x - gap, l[j].y - gap};
            if (j != i)
                assert_true(box_overlap_area(&l[i], &l[j]) == 0.0);
            assert_true(box_overlap_area(&l[i], &mark) == 0.0);
        }
    }
}

/* The case of the heat map: "sensor" and "hottest" a cell apart (markers 2.5 mm apart where a
 * label is 4 mm high), where both labels used to go right of their markers into each other; also
 * coincident markers, and a marker at the frame's right edge. */
static void test_place_labels_without_overlap(void **state)
{
    tp_plot_label two[2] = {{50.0, 40.0, 20.0, 4.0, 0, 0}, {51.0, 42.5, 22.0, 4.0, 0, 0}};
    tp_plot_label same[3] = {{50.0, 40.0, 20.0, 4.0, 0, 0},
                             {50.0, 40.0, 22.0, 4.0, 0, 0},
                             {50.0, 40.0, 18.0, 4.0, 0, 0}};
    tp_plot_label edge[1] = {{98.0, 40.0, 20.0, 4.0, 0, 0}};
    (void)state;
    tp_plot_place_labels(two, 2, 1.5, 0.0, 0.0, 100.0, 80.0);
    assert_clean_placement(two, 2, 1.5);
    tp_plot_place_labels(same, 3, 1.5, 0.0, 0.0, 100.0, 80.0);
    assert_clean_placement(same, 3, 1.5);
    tp_plot_place_labels(edge, 1, 1.5, 0.0, 0.0, 100.0, 80.0);
    assert_clean_placement(edge, 1, 1.5);
    assert_true(edge[0].x0 + edge[0].w <= 98.0); /* went to the left of its marker */
    /* A lone label in open space takes its usual place, right of the marker, centred (by hand:
     * x0 = 50 + 1.5, y0 = 40 - 4/2). */
    tp_plot_place_labels(two, 1, 1.5, 0.0, 0.0, 100.0, 80.0);
    tp_check_abs("x0", two[0].x0, 51.5, 1e-12);
    tp_check_abs("y0", two[0].y0, 38.0, 1e-12);
}

/* Every arrangement of three markers on a 5 mm lattice in the middle of the frame (closer than
 * a label is long) gets a clean placement. */
static void test_place_labels_lattice(void **state)
{
    int a, b;
    (void)state;
    for (a = 0; a < 9; a++)
        for (b = 0; b < 9; b++) {
            tp_plot_label l[3] = {{50.0, 40.0, 16.0, 4.0, 0, 0},
                                  {45.0 + 5.0 * (a % 3), 35.0 + 5.0 * (a / 3), 14.0, 4.0, 0, 0},
                                  {45.0 + 5.0 * (b % 3), 35.0 + 5.0 * (b / 3), 12.0, 4.0, 0, 0}};
            tp_plot_place_labels(l, 3, 1.0, 0.0, 0.0, 100.0, 80.0);
            assert_clean_placement(l, 3, 1.0);
        }
}

/* Marked times: drawn (a PNG of the default size), a time off the x range left out without
 * complaint, a count without an array refused. A title far too long for the width is accepted
 * and wrapped, on charts and maps. */
static void test_chart_marked_times_and_long_titles(void **state)
{
    static const tp_plot_vline marks[3] = {{"reading at setpoint 7 min 20 s", 7.33},
                                           {"surface ready 7 min 50 s", 7.83},
                                           {"late", 99.0}};
    chart_fixture f;
    tp_plot_map map;
    char path[256];
    tp_diag d;
    (void)state;
    tp_diag_init(&d, NULL);
    make_chart(&f);
    f.chart.title = "a title that runs on and on: fit to /tmp/a/rather/long/directory/name/for/"
                    "the/measured/logs/of/the/workshop/bench/plate-warm-up-log-2026-12-02.csv";
    path_in_dir(path, sizeof path, "marked.png");
    assert_int_equal(tp_plot_chart_write_marked(path, &f.chart, marks, 3, &d), TP_OK);
    assert_png(path, 1200, 800);
    assert_int_equal(d.errors + d.warnings, 0);
    assert_int_equal(tp_plot_chart_write_marked(path, &f.chart, NULL, 1, &d), TP_ERR_USAGE);
    make_map(&map);
    map.title = f.chart.title;
    path_in_dir(path, sizeof path, "longmap.png");
    tp_diag_init(&d, NULL);
    assert_int_equal(tp_plot_map_write(path, &map, &d), TP_OK);
    assert_png(path, 1000, 800);
    assert_no_temp_files("marked.png");
}

/* Sanitizer builds: LeakSanitizer takes default options from this hook (sanitizer common
 * interface), here its suppressions of leaks inside PLplot's libraries (tests/lsan.supp).
 * Without the sanitizer nothing calls it. */
const char *__lsan_default_options(void);
const char *__lsan_default_options(void)
{
    return "suppressions=" TP_SOURCE_DIR "/tests/lsan.supp";
}

int main(int argc, char **argv)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_chart_png_default_size),
        cmocka_unit_test(test_chart_png_requested_size),
        cmocka_unit_test(test_chart_svg_root_element),
        cmocka_unit_test(test_chart_pdf_header),
        cmocka_unit_test(test_chart_extension_case_insensitive),
        cmocka_unit_test(test_chart_nonfinite_points_skipped),
        cmocka_unit_test(test_chart_degenerate_ranges_widened),
        cmocka_unit_test(test_chart_bad_input_rejected),
        cmocka_unit_test(test_chart_unknown_extension_writes_nothing),
        cmocka_unit_test(test_chart_missing_directory_writes_nothing),
        cmocka_unit_test(test_chart_failure_keeps_existing_target),
        cmocka_unit_test(test_chart_drawing_failure_keeps_existing_target),
        cmocka_unit_test_teardown(test_chart_plplot_fatal_error_recovered, unset_driver_dir),
        cmocka_unit_test(test_chart_stdout_untouched),
        cmocka_unit_test(test_map_png_with_markers),
        cmocka_unit_test(test_map_single_row),
        cmocka_unit_test(test_map_marker_off_the_map_left_out),
        cmocka_unit_test(test_map_missing_directory_writes_nothing),
        cmocka_unit_test(test_map_bad_input_rejected),
        cmocka_unit_test(test_wrap_title_short_and_empty),
        cmocka_unit_test(test_wrap_title_prose_at_blanks),
        cmocka_unit_test(test_wrap_title_long_path_shortened),
        cmocka_unit_test(test_wrap_title_long_word_and_utf8),
        cmocka_unit_test(test_place_labels_without_overlap),
        cmocka_unit_test(test_place_labels_lattice),
        cmocka_unit_test(test_chart_marked_times_and_long_titles),
    };
    if (argc == 3 && strcmp(argv[1], CHILD_FLAG) == 0)
        return child_without_drivers(argv[2]);
    return cmocka_run_group_tests(tests, group_setup, group_teardown);
}
