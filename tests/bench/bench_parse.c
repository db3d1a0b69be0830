/* Parse rate on a generated netlist of a million elements (an RC ladder of 500 000 sections,
 * 44 MB of text), parsed REPEATS times in a row, each circuit freed before the next: the first
 * parse also pays for memory the system has not handed out lately, the later ones show the
 * parser's own rate. Usage: bench_parse [ELEMENTS] [REPEATS]. */
#define _POSIX_C_SOURCE 200809L
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "stagesim/stagesim.h"

#include "bench_util.h"

int main(int argc, char **argv)
{
    long elements = argc > 1 ? atol(argv[1]) : 1000000;
    int repeats = argc > 2 ? atoi(argv[2]) : 5;
    long sections = elements / 2 > 0 ? elements / 2 : 1;
    size_t len = 0;
    char *text = bench_rc_ladder("rc ladder", "vin n0 0 dc 1 ac 1", sections, "100",
                                 ".ac dec 10 1k 100k\n", &len);
    if (!text)
        return 1;
    printf("| parse | elements | MB | seconds | MB/s |\n| ---: | ---: | ---: | ---: | ---: |\n");
    for (int r = 0; r < repeats; r++) {
        ss_circuit *ckt = NULL;
        ss_error err = {0};
        double t0 = bench_now_s();
        if (ss_circuit_parse_text(text, len, "ladder", NULL, 0, &ckt, &err) != SS_OK) {
            fprintf(stderr, "bench_parse: %s\n", err.message);
            return 1;
        }
        double t = bench_now_s() - t0;
        printf("| %d | %ld | %.1f | %.3f | %.1f |\n", r + 1, 2 * sections, len / 1e6, t,
               len / t / 1e6);
        ss_circuit_destroy(&ckt);
    }
    free(text);
    return 0;
}
