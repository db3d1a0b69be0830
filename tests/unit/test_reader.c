/* Reading whole files (strbuf_read_file): regular files only, refused before any byte is read
 * when they are not (a FIFO must not block, a device must not be read without end), a size cap,
 * and the first failed allocation ends the read. Also the temperature check of
 * ss_solver_set_temp, the way a study's temperature sweep reaches the models. */
#define _DEFAULT_SOURCE /* mkdtemp */
#include "ss_test.h"

#include <errno.h>
#include <stdlib.h>
#include <sys/stat.h>
#include <unistd.h>

#include "netlist/circuit.h"
#include "util/util.h"

typedef struct tmp_dir {
    char path[300];
} tmp_dir;

static void tmp_dir_make(tmp_dir *d)
{
    const char *base = getenv("TMPDIR");
    snprintf(d->path, sizeof d->path, "%s/stagesim_reader_XXXXXX",
             base && base[0] ? base : P_tmpdir);
    assert_non_null(mkdtemp(d->path));
}

static void tmp_file(const tmp_dir *d, const char *name, const char *text, char *out, size_t len)
{
    snprintf(out, len, "%s/%s", d->path, name);
    FILE *f = fopen(out, "wb");
    assert_non_null(f);
    fputs(text, f);
    fclose(f);
}

static void test_regular_file_read_whole(void **state)
{
    (void)state;
    tmp_dir d;
    tmp_dir_make(&d);
    char p[400];
    tmp_file(&d, "a.txt", "line one\nline two\n", p, sizeof p);
    ss_strbuf b = {0};
    int e = -1;
    assert_int_equal(strbuf_read_file(&b, p, 1000, &e), SS_READ_OK);
    assert_int_equal(e, 0);
    assert_int_equal(b.len, 18);
    assert_string_equal(b.data, "line one\nline two\n");
    /* a second read appends */
    assert_int_equal(strbuf_read_file(&b, p, 1000, &e), SS_READ_OK);
    assert_int_equal(b.len, 36);
    assert_string_equal(b.data + 18, "line one\nline two\n");
    strbuf_clear(&b);
    /* an empty file gives an empty, NUL-terminated buffer */
    tmp_file(&d, "empty.txt", "", p, sizeof p);
    assert_int_equal(strbuf_read_file(&b, p, 1000, &e), SS_READ_OK);
    assert_non_null(b.data);
    assert_int_equal(b.len, 0);
    assert_string_equal(b.data, "");
    strbuf_clear(&b);
    remove(p);
    snprintf(p, sizeof p, "%s/a.txt", d.path);
    remove(p);
    rmdir(d.path);
}

static void test_size_cap(void **state)
{
    (void)state;
    tmp_dir d;
    tmp_dir_make(&d);
    char p[400];
    tmp_file(&d, "ten.txt", "0123456789", p, sizeof p);
    ss_strbuf b = {0};
    int e;
    assert_int_equal(strbuf_read_file(&b, p, 10, &e), SS_READ_OK); /* exactly the cap */
    assert_int_equal(b.len, 10);
    strbuf_clear(&b);
    assert_int_equal(strbuf_read_file(&b, p, 9, &e), SS_READ_TOO_LARGE);
    strbuf_clear(&b);
    remove(p);
    rmdir(d.path);
}

static void test_not_regular_refused_without_blocking(void **state)
{
    (void)state;
    tmp_dir d;
    tmp_dir_make(&d);
    char p[400];
    snprintf(p, sizeof p, "%s/pipe", d.path);
    assert_int_equal(mkfifo(p, 0600), 0);
    ss_strbuf b = {0};
    int e;
    /* no writer: opening it blocking would wait for ever (ctest's timeout would end it) */
    assert_int_equal(strbuf_read_file(&b, p, 1000, &e), SS_READ_NOT_REGULAR);
    assert_null(b.data);
    assert_int_equal(strbuf_read_file(&b, "/dev/zero", (size_t)1 << 30, &e),
                     SS_READ_NOT_REGULAR);
    assert_null(b.data);
    assert_string_equal(strbuf_read_error_text(SS_READ_NOT_REGULAR, 0),
                        "not a regular file (a FIFO, a device or a socket)");
    /* a folder reads as "Is a directory", a missing file as its errno */
    assert_int_equal(strbuf_read_file(&b, d.path, 1000, &e), SS_READ_OPEN);
    assert_int_equal(e, EISDIR);
    remove(p);
    assert_int_equal(strbuf_read_file(&b, p, 1000, &e), SS_READ_OPEN);
    assert_int_equal(e, ENOENT);
    assert_null(b.data);
    rmdir(d.path);
}

/* Every allocation the read makes, failed in turn: the read stops at once with SS_READ_NOMEM
 * (the sanitizer build checks that nothing leaks). */
static void test_allocation_failure_ends_the_read(void **state)
{
    (void)state;
    tmp_dir d;
    tmp_dir_make(&d);
    char p[400];
    tmp_file(&d, "n.cir", "title\nr1 a 0 1k\n", p, sizeof p);
    for (long n = 0;; n++) {
        ss_strbuf b = {0};
        int e;
        ss_alloc_fail_at(n); /* counts from here */
        int rc = strbuf_read_file(&b, p, 1000, &e);
        ss_alloc_fail_at(-1);
        strbuf_clear(&b);
        if (rc == SS_READ_OK)
            break;
        assert_int_equal(rc, SS_READ_NOMEM);
        assert_true(n < 10);
    }
    remove(p);
    rmdir(d.path);
}

/* A temperature set after parsing (a study's temp sweep) is checked against every model's
 * scaled parameters: XTB = 1e300 leaves BF at 100 at TNOM but overflows it at 85 C
 * (BF(T) = BF (T/TNOM)^XTB, docs/models.md). The circuit keeps its temperature. */
static void test_set_temp_checks_the_models(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("t\nvcc c 0 5\nvb b 0 0.7\nq1 c b 0 qhot\n"
                                    ".model qhot npn xtb=1e300\n");
    ss_error err = {0};
    assert_int_equal(ss_solver_set_temp(ss_test_sv(ckt), 85.0, &err), SS_ERR_INPUT);
    char msg[1400];
    ss_error_format(&err, msg, sizeof msg);
    assert_string_equal(msg, "test.cir:5: model 'qhot': at 85 C, bf becomes inf (it must stay "
                             "finite and > 0)");
    ss_assert_close(ss_circuit_temp_c(ckt), 27.0, 0, 0);
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_solver_set_temp(ss_test_sv(ckt), 27.0, &err), SS_OK);
    ss_test_destroy(&ckt);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_regular_file_read_whole),
        cmocka_unit_test(test_size_cap),
        cmocka_unit_test(test_not_regular_refused_without_blocking),
        cmocka_unit_test(test_allocation_failure_ends_the_read),
        cmocka_unit_test(test_set_temp_checks_the_models),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
