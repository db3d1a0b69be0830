/* Replays saved fuzz inputs through the fuzz harness without libFuzzer: every file named on
 * the command line, and every file in each folder named, in name order. Any crash, leak or
 * broken check of the harness fails the run; finding them is the fuzzer's job. */
#define _DEFAULT_SOURCE
#include <dirent.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static int replay_file(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (!f) {
        fprintf(stderr, "replay: cannot open '%s'\n", path);
        return -1;
    }
    size_t cap = 4096, len = 0;
    uint8_t *buf = malloc(cap);
    size_t got;
    while (buf && (got = fread(buf + len, 1, cap - len, f)) > 0) {
        len += got;
        if (len == cap) {
            uint8_t *nb = realloc(buf, cap * 2);
            if (!nb) {
                free(buf);
                buf = NULL;
                break;
            }
            buf = nb;
            cap *= 2;
        }
    }
    int bad = ferror(f);
    fclose(f);
    if (!buf || bad) {
        free(buf);
        fprintf(stderr, "replay: cannot read '%s'\n", path);
        return -1;
    }
    /* an exact-size copy, so a read past the end is caught as it would be under libFuzzer */
    uint8_t *exact = malloc(len ? len : 1);
    if (!exact) {
        free(buf);
        return -1;
    }
    memcpy(exact, buf, len);
    free(buf);
    LLVMFuzzerTestOneInput(exact, len);
    free(exact);
    return 0;
}

static int by_name(const void *a, const void *b)
{
    return strcmp(*(char *const *)a, *(char *const *)b);
}

/* Replays every regular file of dir (hidden files skipped); returns the count or -1. */
static int replay_dir(const char *dir)
{
    DIR *d = opendir(dir);
    if (!d) {
        fprintf(stderr, "replay: cannot open folder '%s'\n", dir);
        return -1;
    }
    char **names = NULL;
    size_t n = 0, cap = 0;
    struct dirent *de;
    while ((de = readdir(d)) != NULL) {
        if (de->d_name[0] == '.')
            continue;
        if (n == cap) {
            cap = cap ? 2 * cap : 64;
            char **nn = realloc(names, cap * sizeof *nn);
            if (!nn)
                break;
            names = nn;
        }
        size_t len = strlen(dir) + strlen(de->d_name) + 2;
        names[n] = malloc(len);
        if (!names[n])
            break;
        snprintf(names[n], len, "%s/%s", dir, de->d_name);
        n++;
    }
    closedir(d);
    if (n > 1)
        qsort(names, n, sizeof *names, by_name);
    int count = 0, rc = 0;
    for (size_t i = 0; i < n; i++) {
        struct stat sb;
        if (stat(names[i], &sb) == 0 && S_ISREG(sb.st_mode)) {
            if (replay_file(names[i]) != 0)
                rc = -1;
            count++;
        }
        free(names[i]);
    }
    free(names);
    return rc ? -1 : count;
}

int main(int argc, char **argv)
{
    if (argc < 2) {
        fprintf(stderr, "usage: %s FILE|FOLDER...\n", argv[0]);
        return 2;
    }
    int total = 0, failed = 0;
    for (int i = 1; i < argc; i++) {
        struct stat sb;
        if (stat(argv[i], &sb) != 0) {
            fprintf(stderr, "replay: '%s' does not exist\n", argv[i]);
            failed = 1;
        } else if (S_ISDIR(sb.st_mode)) {
            int n = replay_dir(argv[i]);
            if (n < 0)
                failed = 1;
            else
                total += n;
        } else {
            if (replay_file(argv[i]) != 0)
                failed = 1;
            total++;
        }
    }
    printf("replayed %d inputs%s\n", total, failed ? " (some could not be read)" : "");
    return failed ? 2 : 0;
}
