/* Unit tests of the Bode-plot SVG writer: document shape, labels, escaping, input errors,
 * allocation failures and the atomic file write. How the plot looks is checked by eye. */
#define _XOPEN_SOURCE 700

#include <dirent.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>

#include <cmocka.h> /* after the four above, which it needs */

#include "output/svg.h"

#define N_PTS 61
/* math.h's NAN is a float constant; the inputs are doubles */
#define NAN_D ((double)NAN)

/* Sweep data shared by the tests, filled by make_high_pass(). */
typedef struct sweep {
    double freq_hz[N_PTS];
    double gain_db[N_PTS];
    double phase_deg[N_PTS];
    svg_bode_input in;
} sweep;

/* Input coupling of an invented hydrophone buffer: 100 nF into 10 kOhm, a first-order high-pass
 * H = jwRC / (1 + jwRC) (standard circuit theory, closed form), so |H| = wRC / sqrt(1 + (wRC)^2),
 * arg H = 90 deg - atan(wRC), and the -3 dB corner is 1 / (2 pi R C) = 159.15 Hz.
 * Swept 1 Hz .. 1 MHz, 10 points per decade. */
static void make_high_pass(sweep *s, const char *title)
{
    const double r_ohm = 10e3, cap_f = 100e-9;
    for (int i = 0; i < N_PTS; i++) {
        double f = pow(10.0, i / 10.0);
        double wrc = 2.0 * SS_PI * f * r_ohm * cap_f;
        s->freq_hz[i] = f;
        s->gain_db[i] = 20.0 * log10(wrc / sqrt(1.0 + wrc * wrc));
        s->phase_deg[i] = 90.0 - atan(wrc) * 180.0 / SS_PI;
    }
    s->in = (svg_bode_input){.title = title,
                             .freq_hz = s->freq_hz,
                             .gain_db = s->gain_db,
                             .phase_deg = s->phase_deg,
                             .n = N_PTS,
                             .f_low_hz = 1.0 / (2.0 * SS_PI * r_ohm * cap_f),
                             .f_high_hz = NAN_D,
                             .gain_mid_db = 0.0};
}

static int count_of(const char *hay, const char *needle)
{
    int n = 0;
    for (const char *p = strstr(hay, needle); p; p = strstr(p + 1, needle))
        n++;
    return n;
}

/* Renders s->in and returns the text (the caller frees it with strbuf_clear). */
static ss_strbuf render_ok(const sweep *s)
{
    ss_strbuf b = {0};
    ss_error err = {0};
    assert_int_equal(svg_render_bode(&b, &s->in, &err), SS_OK);
    assert_int_equal(err.code, SS_OK);
    assert_non_null(b.data);
    return b;
}

/* A rendered plot must never carry a non-number into a coordinate: printf writes those as
 * nan, -nan, inf or -inf, and coordinates follow a quote, a comma or a space. */
static void assert_no_bad_numbers(const char *doc)
{
    static const char *const bad[] = {"\"nan", "\"-nan", "\"inf", "\"-inf", ",nan",  ",-nan",
                                      ",inf",  ",-inf",  " nan,", " -nan,", " inf,", " -inf,"};
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        if (strstr(doc, bad[i]))
            fail_msg("found '%s' in the document", bad[i]);
    }
}

static void test_render_has_xml_declaration_and_svg11_root(void **state)
{
    (void)state;
    sweep s;
    make_high_pass(&s, "Hydrophone buffer input");
    ss_strbuf b = render_ok(&s);
    assert_memory_equal(b.data, "<?xml", 5);
    assert_non_null(strstr(b.data, "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\""));
    assert_non_null(strstr(b.data, "viewBox=\""));
    assert_non_null(strstr(b.data, "</svg>\n"));
    assert_no_bad_numbers(b.data);
    strbuf_clear(&b);
}

static void test_render_text_elements_are_balanced(void **state)
{
    (void)state;
    sweep s;
    make_high_pass(&s, "Hydrophone buffer input");
    ss_strbuf b = render_ok(&s);
    int n_open = count_of(b.data, "<text");
    assert_true(n_open > 10);
    assert_int_equal(n_open, count_of(b.data, "</text>"));
    assert_int_equal(count_of(b.data, "<g"), count_of(b.data, "</g>"));
    strbuf_clear(&b);
}

static void test_render_labels_low_corner(void **state)
{
    (void)state;
    sweep s;
    make_high_pass(&s, NULL);
    ss_strbuf b = render_ok(&s);
    /* 1 / (2 pi * 10 kOhm * 100 nF) = 159.15 Hz, shown to 3 digits */
    assert_non_null(strstr(b.data, ">f_low 159 Hz</text>"));
    assert_null(strstr(b.data, "f_high"));
    assert_non_null(strstr(b.data, "3.01 dB"));
    strbuf_clear(&b);
}

static void test_render_frequency_ticks_use_si_prefixes(void **state)
{
    (void)state;
    sweep s;
    make_high_pass(&s, NULL);
    ss_strbuf b = render_ok(&s);
    assert_non_null(strstr(b.data, ">10 Hz</text>"));
    assert_non_null(strstr(b.data, ">1 kHz</text>"));
    assert_non_null(strstr(b.data, ">100 kHz</text>"));
    assert_non_null(strstr(b.data, ">1 MHz</text>"));
    strbuf_clear(&b);
}

static void test_render_escapes_title(void **state)
{
    (void)state;
    sweep s;
    make_high_pass(&s, "Gain & phase <draft> \"A\"");
    ss_strbuf b = render_ok(&s);
    assert_non_null(strstr(b.data, ">Gain &amp; phase &lt;draft&gt; &quot;A&quot;</text>"));
    assert_null(strstr(b.data, "<draft>"));
    strbuf_clear(&b);
}

/* Every <text> of doc inside the page's frame (0 .. 860 px wide, the writer's page), its
 * extent estimated from its characters: 0.6 em per glyph for regular text (a common rule of
 * thumb for sans-serif fonts, from memory) and 0.66 em for bold, from its x, anchor and font
 * size (its own, else 13 inside the axis-title group, else 11). Rotated texts are skipped.
 * Returns how many texts were checked; fails on the first outside. */
static int assert_texts_inside(const char *doc, double page_w, double right_limit_title)
{
    int n = 0;
    for (const char *p = strstr(doc, "<text "); p; p = strstr(p + 1, "<text ")) {
        const char *gt = strchr(p, '>'), *end = strstr(p, "</text>");
        assert_non_null(gt);
        assert_non_null(end);
        char attrs[512];
        size_t alen = (size_t)(gt - p) < sizeof attrs - 1 ? (size_t)(gt - p) : sizeof attrs - 1;
        memcpy(attrs, p, alen);
        attrs[alen] = '\0';
        if (strstr(attrs, "rotate("))
            continue;
        double x = atof(strstr(attrs, "x=\"") + 3);
        const char *fs = strstr(attrs, "font-size=\"");
        double font = fs ? atof(fs + 11) : 11.0;
        int bold = strstr(attrs, "bold") != NULL;
        /* displayed characters: entities count as one, UTF-8 continuation bytes as none */
        double chars = 0.0;
        for (const char *c = gt + 1; c < end; c++) {
            if (*c == '&') {
                const char *semi = strchr(c, ';');
                c = semi ? semi : c;
                chars += 1.0;
            } else if (((unsigned char)*c & 0xC0) != 0x80) {
                chars += 1.0;
            }
        }
        double w = chars * (bold ? 0.66 : 0.6) * font;
        double lo = strstr(attrs, "\"middle\"") ? x - w / 2 : strstr(attrs, "\"end\"") ? x - w : x;
        double hi = lo + w;
        if (lo < 0.0 || hi > page_w || (bold && hi > right_limit_title))
            fail_msg("text outside the frame (%.1f .. %.1f px): %.*s", lo, hi, (int)(end - p), p);
        n++;
    }
    return n;
}

/* A 200-character title (of wide and of multi-byte characters) stays inside the plot frame:
 * cut with an ellipsis, every text element within the page. */
static void test_render_long_title_stays_inside_the_frame(void **state)
{
    (void)state;
    char title[1024] = "";
    for (int i = 0; i < 20; i++)
        strcat(title, "Geophone WMWM"); /* 13 characters, 260 in all */
    title[200] = '\0';
    sweep s;
    make_high_pass(&s, title);
    ss_strbuf b = render_ok(&s);
    assert_true(assert_texts_inside(b.data, 860.0, 830.0) > 10);
    assert_non_null(strstr(b.data, "\xE2\x80\xA6</text>")); /* the ellipsis ends the title */
    assert_null(strstr(b.data, title));
    strbuf_clear(&b);
    /* 200 characters of two bytes each (U+00B5 micro sign): cut between whole characters */
    char micro[512] = "";
    for (int i = 0; i < 200; i++)
        strcat(micro, "\xC2\xB5");
    make_high_pass(&s, micro);
    b = render_ok(&s);
    assert_true(assert_texts_inside(b.data, 860.0, 830.0) > 10);
    assert_non_null(strstr(b.data, "\xC2\xB5\xE2\x80\xA6</text>"));
    strbuf_clear(&b);
    /* a short title is kept whole */
    make_high_pass(&s, "Geophone preamp");
    b = render_ok(&s);
    assert_non_null(strstr(b.data, ">Geophone preamp</text>"));
    assert_true(assert_texts_inside(b.data, 860.0, 830.0) > 10);
    strbuf_clear(&b);
}

/* A sweep inside one decade has at most one decade line: the ticks fall back to multiples. */
static void test_render_sweep_within_one_decade_labels_multiples(void **state)
{
    (void)state;
    sweep s;
    make_high_pass(&s, NULL);
    for (int i = 0; i < N_PTS; i++)
        s.freq_hz[i] = 2e3 + 6e3 * i / (N_PTS - 1); /* 2 kHz .. 8 kHz */
    s.in.f_low_hz = NAN_D;
    ss_strbuf b = render_ok(&s);
    assert_non_null(strstr(b.data, ">2 kHz</text>"));
    assert_non_null(strstr(b.data, ">5 kHz</text>"));
    assert_no_bad_numbers(b.data);
    strbuf_clear(&b);
}

/* Flat magnitude and flat phase (zero data range), two points, no mid-band gain known. */
static void test_render_flat_response_is_finite(void **state)
{
    (void)state;
    double freq_hz[2] = {100.0, 200.0}, gain_db[2] = {6.0, 6.0}, phase_deg[2] = {0.0, 0.0};
    svg_bode_input in = {NULL, freq_hz, gain_db, phase_deg, 2, NAN_D, NAN_D, NAN_D};
    ss_strbuf b = {0};
    ss_error err = {0};
    assert_int_equal(svg_render_bode(&b, &in, &err), SS_OK);
    assert_no_bad_numbers(b.data);
    assert_null(strstr(b.data, "3.01 dB"));
    assert_int_equal(count_of(b.data, "<text"), count_of(b.data, "</text>"));
    strbuf_clear(&b);
}

static void test_render_rejects_single_point(void **state)
{
    (void)state;
    sweep s;
    make_high_pass(&s, NULL);
    s.in.n = 1;
    ss_strbuf b = {0};
    ss_error err = {0};
    assert_int_equal(svg_render_bode(&b, &s.in, &err), SS_ERR_INPUT);
    assert_int_equal(err.code, SS_ERR_INPUT);
    assert_non_null(strstr(err.message, "at least 2"));
    assert_int_equal(b.len, 0);
    strbuf_clear(&b);
}

static void test_render_rejects_descending_frequency(void **state)
{
    (void)state;
    sweep s;
    make_high_pass(&s, NULL);
    s.freq_hz[5] = s.freq_hz[4];
    ss_strbuf b = {0};
    ss_error err = {0};
    assert_int_equal(svg_render_bode(&b, &s.in, &err), SS_ERR_INPUT);
    assert_non_null(strstr(err.message, "point 6"));
    strbuf_clear(&b);
}

static void test_render_rejects_nonpositive_frequency(void **state)
{
    (void)state;
    sweep s;
    make_high_pass(&s, NULL);
    s.freq_hz[0] = 0.0;
    ss_strbuf b = {0};
    ss_error err = {0};
    assert_int_equal(svg_render_bode(&b, &s.in, &err), SS_ERR_INPUT);
    assert_non_null(strstr(err.message, "not positive"));
    strbuf_clear(&b);
}

static void test_render_rejects_nan_phase_naming_point(void **state)
{
    (void)state;
    sweep s;
    make_high_pass(&s, NULL);
    s.phase_deg[9] = NAN_D;
    ss_strbuf b = {0};
    ss_error err = {0};
    assert_int_equal(svg_render_bode(&b, &s.in, &err), SS_ERR_INPUT);
    assert_non_null(strstr(err.message, "phase at point 10"));
    assert_non_null(strstr(err.message, "NaN"));
    strbuf_clear(&b);
}

/* Allocation sweep: make allocation N fail for N = 0, 1, ... until rendering succeeds; every
 * failure must be a clean SS_ERR_NOMEM that leaves the caller's buffer as it was. */
static void test_render_allocation_failures_are_clean(void **state)
{
    (void)state;
    sweep s;
    make_high_pass(&s, "Hydrophone buffer input");
    ss_status st = SS_ERR_NOMEM;
    long n_fail;
    for (n_fail = 0; n_fail < 1000 && st != SS_OK; n_fail++) {
        ss_strbuf b = {0};
        strbuf_append(&b, "keep", 4); /* allocated before the injection is armed */
        ss_error err = {0};
        ss_alloc_fail_at(n_fail);
        st = svg_render_bode(&b, &s.in, &err);
        ss_alloc_fail_at(-1);
        if (st != SS_OK) {
            assert_int_equal(st, SS_ERR_NOMEM);
            assert_int_equal(err.code, SS_ERR_NOMEM);
            assert_int_equal(b.len, 4);
            assert_string_equal(b.data, "keep");
            assert_int_equal(b.failed, 0);
        }
        strbuf_clear(&b);
    }
    assert_int_equal(st, SS_OK);
    assert_true(n_fail > 1);
}

/* ---- file output ------------------------------------------------------------------------- */

/* A fresh folder under the system's temporary directory. */
static void make_temp_dir(char *buf, size_t buf_len)
{
    const char *base = getenv("TMPDIR");
    snprintf(buf, buf_len, "%s/stagesim_svg_XXXXXX", base && base[0] ? base : P_tmpdir);
    assert_non_null(mkdtemp(buf));
}

/* Entries of dir other than . and .. */
static int count_dir_entries(const char *dir)
{
    DIR *d = opendir(dir);
    assert_non_null(d);
    int n = 0;
    for (struct dirent *e = readdir(d); e; e = readdir(d))
        if (strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0)
            n++;
    closedir(d);
    return n;
}

static void test_write_creates_file_and_no_temp_file(void **state)
{
    (void)state;
    char dir[512], path[600];
    make_temp_dir(dir, sizeof dir);
    snprintf(path, sizeof path, "%s/bode.svg", dir);
    sweep s;
    make_high_pass(&s, "Hydrophone buffer input");
    ss_error err = {0};
    assert_int_equal(svg_write_bode(path, &s.in, &err), SS_OK);
    /* written twice: the second replaces the first */
    assert_int_equal(svg_write_bode(path, &s.in, &err), SS_OK);
    assert_int_equal(count_dir_entries(dir), 1);

    FILE *f = fopen(path, "rb");
    assert_non_null(f);
    char head[6] = {0};
    assert_int_equal(fread(head, 1, 5, f), 5);
    fclose(f);
    assert_string_equal(head, "<?xml");

    assert_int_equal(remove(path), 0);
    assert_int_equal(rmdir(dir), 0);
}

static void test_write_into_missing_folder_is_io_error(void **state)
{
    (void)state;
    char dir[512], path[600];
    make_temp_dir(dir, sizeof dir);
    snprintf(path, sizeof path, "%s/no_such_folder/bode.svg", dir);
    sweep s;
    make_high_pass(&s, NULL);
    ss_error err = {0};
    assert_int_equal(svg_write_bode(path, &s.in, &err), SS_ERR_IO);
    assert_string_equal(err.file, path);
    assert_true(err.message[0] != '\0');
    assert_int_equal(count_dir_entries(dir), 0);
    assert_int_equal(rmdir(dir), 0);
}

static void test_write_bad_input_names_file_and_writes_nothing(void **state)
{
    (void)state;
    char dir[512], path[600];
    make_temp_dir(dir, sizeof dir);
    snprintf(path, sizeof path, "%s/bode.svg", dir);
    sweep s;
    make_high_pass(&s, NULL);
    s.gain_db[3] = NAN_D;
    ss_error err = {0};
    assert_int_equal(svg_write_bode(path, &s.in, &err), SS_ERR_INPUT);
    assert_string_equal(err.file, path);
    assert_non_null(strstr(err.message, "gain at point 4"));
    assert_int_equal(count_dir_entries(dir), 0);
    assert_int_equal(rmdir(dir), 0);
}

/* The file variant under allocation failure: a clean error and no file, temporary or final. */
static void test_write_allocation_failures_leave_no_file(void **state)
{
    (void)state;
    char dir[512], path[600];
    make_temp_dir(dir, sizeof dir);
    snprintf(path, sizeof path, "%s/bode.svg", dir);
    sweep s;
    make_high_pass(&s, NULL);
    ss_status st = SS_ERR_NOMEM;
    for (long n_fail = 0; n_fail < 1000 && st != SS_OK; n_fail++) {
        ss_error err = {0};
        ss_alloc_fail_at(n_fail);
        st = svg_write_bode(path, &s.in, &err);
        ss_alloc_fail_at(-1);
        if (st != SS_OK) {
            assert_int_equal(st, SS_ERR_NOMEM);
            assert_int_equal(count_dir_entries(dir), 0);
        }
    }
    assert_int_equal(st, SS_OK);
    assert_int_equal(count_dir_entries(dir), 1);
    assert_int_equal(remove(path), 0);
    assert_int_equal(rmdir(dir), 0);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_render_has_xml_declaration_and_svg11_root),
        cmocka_unit_test(test_render_text_elements_are_balanced),
        cmocka_unit_test(test_render_labels_low_corner),
        cmocka_unit_test(test_render_frequency_ticks_use_si_prefixes),
        cmocka_unit_test(test_render_escapes_title),
        cmocka_unit_test(test_render_long_title_stays_inside_the_frame),
        cmocka_unit_test(test_render_sweep_within_one_decade_labels_multiples),
        cmocka_unit_test(test_render_flat_response_is_finite),
        cmocka_unit_test(test_render_rejects_single_point),
        cmocka_unit_test(test_render_rejects_descending_frequency),
        cmocka_unit_test(test_render_rejects_nonpositive_frequency),
        cmocka_unit_test(test_render_rejects_nan_phase_naming_point),
        cmocka_unit_test(test_render_allocation_failures_are_clean),
        cmocka_unit_test(test_write_creates_file_and_no_temp_file),
        cmocka_unit_test(test_write_into_missing_folder_is_io_error),
        cmocka_unit_test(test_write_bad_input_names_file_and_writes_nothing),
        cmocka_unit_test(test_write_allocation_failures_leave_no_file),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
