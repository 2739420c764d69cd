/* soak.c - the long run behind `make soak`: soak COUNT SEED checks the
 * generated models of seeds SEED .. SEED+COUNT-1 (tests/randmodel.h) in
 * batches, prints the seed and reason of every failure, the rate, and last
 * `N passed, N failed`; soak COUNT SEED OPTIONS passes OPTIONS to every
 * `dervish build`.  `make soak SOAK_COUNT=1 SOAK_SEED=<seed>` replays one
 * failure and prints its model (SOAK_OPTIONS sets the options). */
#include "randmodel.h"

#include <time.h>

#define BATCH 100

static long count;
static uint64_t first;
static RmTally tally;
static const char *options = "";

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* The whole run is one test, so the shared helpers' assertions have a
 * runner to report to; it runs unforked (so without Check's time limit)
 * and the tally stays in this process. */
START_TEST(soak)
{
    double start = now(), last_report = start;
    for (long done = 0; done < count; done += BATCH) {
        int n = count - done < BATCH ? (int)(count - done) : BATCH;
        rm_run_seeds(first + (uint64_t)done, n, &tally, stdout, count <= 10,
                     options);
        if (now() - last_report > 60 || done + n == count) {
            last_report = now();
            printf("soak: %ld models, %ld failed, %.1f models/s\n",
                   tally.models, tally.failed,
                   (double)tally.models / (last_report - start));
            fflush(stdout);
        }
    }
}
END_TEST

int main(int argc, char **argv)
{
    char *end1 = NULL, *end2 = NULL;
    if (argc == 3 || argc == 4) {
        count = strtol(argv[1], &end1, 10);
        first = strtoull(argv[2], &end2, 10);
        if (argc == 4)
            options = argv[3];
    }
    if ((argc != 3 && argc != 4) || *end1 || *end2 || count < 1) {
        fprintf(stderr, "usage: soak COUNT SEED [BUILD-OPTIONS]\n");
        return 2;
    }
    Suite *s = suite_create("soak");
    TCase *tc = tcase_create("soak");
    tcase_add_test(tc, soak);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_set_fork_status(sr, CK_NOFORK);
    srunner_run_all(sr, CK_SILENT);
    int broken = srunner_ntests_failed(sr);
    srunner_free(sr);
    printf("gradient entries: %ld by complex step, %ld by Richardson "
           "differences, %ld skipped at kinks\n",
           tally.n_cs, tally.n_fd, tally.n_skipped);
    printf("%ld passed, %ld failed\n", tally.models - tally.failed,
           tally.failed + (broken ? 1 : 0));
    return tally.failed || broken ? 1 : 0;
}
