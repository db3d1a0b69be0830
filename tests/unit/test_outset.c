/* Output sets and what they rest on: SHA-256 against the published test vectors, XML text that
 * stays well-formed whatever bytes it is given, the strict reading of tables back, the staging
 * of files until commit and the refusal of two outputs to one file. */
#define _POSIX_C_SOURCE 200809L
#include <stdlib.h>
#include <sys/stat.h>
#include <unistd.h>

#include "ss_test.h"

#include "output/output.h"
#include "util/sha256.h"

/* FIPS PUB 180-2 (NIST, 2002), Appendix B: B.1 one block, B.2 two blocks, B.3 a million 'a'. */
static void test_sha256_fips_vectors(void **state)
{
    (void)state;
    char hex[65];
    ss_sha256_hex("abc", 3, hex);
    assert_string_equal(hex, "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
    const char *b2 = "abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq";
    ss_sha256_hex(b2, strlen(b2), hex);
    assert_string_equal(hex, "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1");
    /* the million in uneven pieces, so every path through update is taken */
    sha256_ctx c;
    sha256_init(&c);
    char a[1000];
    memset(a, 'a', sizeof a);
    size_t done = 0, piece = 1;
    while (done < 1000000) {
        size_t n = piece < 1000000 - done ? piece : 1000000 - done;
        sha256_update(&c, a, n);
        done += n;
        piece = piece % 937 + 63; /* 63 .. 999: within a[] */
    }
    unsigned char d[32];
    sha256_final(&c, d);
    sha256_hex(d, hex);
    assert_string_equal(hex, "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0");
    ss_sha256_hex("", 0, hex); /* the empty message (common practice: `sha256sum < /dev/null`) */
    assert_string_equal(hex, "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");
}

static void xml_of(const char *in, char *out, size_t len)
{
    ss_strbuf b = {0};
    xml_put_text(&b, in);
    snprintf(out, len, "%s", b.data ? b.data : "");
    strbuf_clear(&b);
}

/* RFC 3629: overlong forms, surrogates, bytes F5..FF, a cut sequence are not UTF-8; XML 1.0
 * (5th ed.) sec. 2.2: no control characters but tab, LF, CR, and not U+FFFE/U+FFFF. */
static void test_xml_text_replaces_what_is_not_utf8(void **state)
{
    (void)state;
    char out[256];
    xml_of("a<b>&\"c\"", out, sizeof out);
    assert_string_equal(out, "a&lt;b&gt;&amp;&quot;c&quot;");
    xml_of("\xc3\xa4 \xce\xbc \xe2\x88\x92 \xf0\x9f\x94\x8a", out, sizeof out); /* kept */
    assert_string_equal(out, "\xc3\xa4 \xce\xbc \xe2\x88\x92 \xf0\x9f\x94\x8a");
    xml_of("n\xe4", out, sizeof out); /* Latin-1 a-umlaut */
    assert_string_equal(out, "n\xef\xbf\xbd");
    xml_of("\xc0\x80|\xed\xa0\x80|\xf5\x80\x80\x80|\xe2\x82|\xef\xbf\xbe", out, sizeof out);
    /* each byte of a bad sequence stands alone: a lead byte is replaced, its continuation bytes
     * then are not UTF-8 on their own either */
    assert_string_equal(out, "\xef\xbf\xbd\xef\xbf\xbd|\xef\xbf\xbd\xef\xbf\xbd\xef\xbf\xbd|"
                             "\xef\xbf\xbd\xef\xbf\xbd\xef\xbf\xbd\xef\xbf\xbd|"
                             "\xef\xbf\xbd\xef\xbf\xbd|\xef\xbf\xbd\xef\xbf\xbd\xef\xbf\xbd");
    xml_of("a\x01" "b\tc", out, sizeof out);
    assert_string_equal(out, "a b\tc");
}

static char tmpdir[256];

static void setup_dir(void)
{
    snprintf(tmpdir, sizeof tmpdir, "/tmp/ss_test_outset_%ld", (long)getpid());
    mkdir(tmpdir, 0777);
}

static void put(const char *path, const char *text)
{
    FILE *f = fopen(path, "wb");
    assert_non_null(f);
    fputs(text, f);
    fclose(f);
}

static ss_status read_table(const char *text, char *msg, size_t len)
{
    char path[512];
    snprintf(path, sizeof path, "%s/t.csv", tmpdir);
    put(path, text);
    ss_table *t = NULL;
    ss_error err = {0};
    ss_status st = ss_table_read_csv(path, &t, &err);
    ss_error_format(&err, msg, len);
    ss_table_destroy(&t);
    unlink(path);
    return st;
}

static void test_read_csv_takes_only_what_the_writer_writes(void **state)
{
    (void)state;
    setup_dir();
    char msg[1400];
    assert_int_equal(read_table("point,x\n0,1.5e-07\n1,-inf\n2,\n3,6.839\n", msg, sizeof msg),
                     SS_OK);
    assert_int_equal(read_table("point,x\n0,nan\n", msg, sizeof msg), SS_ERR_INPUT);
    assert_non_null(strstr(msg, ":2: 'nan' in column 2 is not a number"));
    assert_int_equal(read_table("point,x\n0,0x1p4\n", msg, sizeof msg), SS_ERR_INPUT);
    assert_int_equal(read_table("point,x\n0, 1\n", msg, sizeof msg), SS_ERR_INPUT);
    assert_int_equal(read_table("point,x\n0,1e\n", msg, sizeof msg), SS_ERR_INPUT);
    assert_int_equal(read_table("point,x\n0,1\n1,-0.000489", msg, sizeof msg), SS_ERR_INPUT);
    assert_non_null(strstr(msg, ":3: the last line has no line end: the file was cut short"));
    rmdir(tmpdir);
}

static int exists(const char *path) { return access(path, F_OK) == 0; }

static void test_set_stages_until_commit_and_refuses_one_file_twice(void **state)
{
    (void)state;
    setup_dir();
    char a_path[512], b_path[512], man[512], lock[512];
    snprintf(a_path, sizeof a_path, "%s/a.csv", tmpdir);
    snprintf(b_path, sizeof b_path, "%s/./a.csv", tmpdir);
    snprintf(man, sizeof man, "%s/run_manifest.csv", tmpdir);
    snprintf(lock, sizeof lock, "%s/.stagesim.lock", tmpdir);
    ss_outset *s = NULL;
    ss_error err = {0};
    assert_int_equal(ss_outset_open(tmpdir, &s, &err), SS_OK);
    assert_true(exists(lock));
    const char *staged = NULL, *again = NULL;
    assert_int_equal(ss_outset_add(s, a_path, "a.csv", &staged, &err), SS_OK);
    assert_int_equal(ss_outset_add(s, b_path, "--other", &again, &err), SS_ERR_INPUT);
    assert_non_null(strstr(err.message, "is the same file as a.csv"));
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_outset_add(s, man, "m", &again, &err), SS_ERR_INPUT);
    put(staged, "x\n"); /* not through the atomic writer: not recorded as written */
    memset(&err, 0, sizeof err);
    ss_table *t = NULL;
    assert_int_equal(ss_outset_note(s, "command", "test", &err), SS_OK);
    {
        /* a file written through the library's writer is part of the set */
        ss_error e2 = {0};
        char p2[512];
        snprintf(p2, sizeof p2, "%s/b.csv", tmpdir);
        const char *st2 = NULL;
        assert_int_equal(ss_outset_add(s, p2, "b.csv", &st2, &e2), SS_OK);
        assert_int_equal(ss_table_read_csv("/nonexistent", &t, &e2), SS_ERR_IO);
        assert_int_equal(output_write_atomic(st2, "b\n", 2, &e2), SS_OK);
        assert_false(exists(p2)); /* staged, not yet visible */
        assert_int_equal(ss_outset_commit(s, &err), SS_OK);
        assert_true(exists(p2));
        assert_false(exists(st2));
        unlink(p2);
    }
    assert_false(exists(a_path)); /* reserved, never written: not part of the set */
    assert_true(exists(man));
    ss_outset_destroy(&s); /* removes the staged a.csv that was never committed */
    assert_false(exists(lock));
    unlink(man);
    rmdir(tmpdir);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_sha256_fips_vectors),
        cmocka_unit_test(test_xml_text_replaces_what_is_not_utf8),
        cmocka_unit_test(test_read_csv_takes_only_what_the_writer_writes),
        cmocka_unit_test(test_set_stages_until_commit_and_refuses_one_file_twice),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
