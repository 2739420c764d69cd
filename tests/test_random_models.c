/* test_random_models.c - randomized end-to-end test: 300 generated models
 * (tests/randmodel.h) built by dervish, their emitted C compiled with gcc
 * and run, value and gradient judged against the IR evaluator, complex
 * steps and Richardson differences; then the regression models kept in
 * tests/random/, each of which once showed a compiler bug. */
#include "randmodel.h"

#include <glob.h>

#define BATCHES 6
#define BATCH_SIZE 50
#define FIRST_SEED 1        /* CI always checks the same models */

/* One batch of generated models: all must pass.  The message names every
 * failing seed; `make soak SOAK_COUNT=1 SOAK_SEED=<seed>` replays one.
 * The last batch is the first again, built with --part-size 1: every
 * function of more than 4 statements is then written as parts sharing a
 * frame, which must not change a single result. */
START_TEST(generated_models)
{
    RmTally t = {0, 0, 0, 0, 0};
    char *log = NULL;
    size_t loglen = 0;
    FILE *out = open_memstream(&log, &loglen);
    ck_assert_ptr_nonnull(out);
    int parts = _i == BATCHES;
    int failed = rm_run_seeds(FIRST_SEED + (uint64_t)(parts ? 0 : _i) *
                                               BATCH_SIZE,
                              BATCH_SIZE, &t, out, 1,
                              parts ? "--part-size 1" : "");
    fclose(out);
    ck_assert_msg(failed == 0, "%d of %d models failed:\n%s", failed,
                  BATCH_SIZE, log);
    /* the tally for the correctness report of make check */
    printf("random models, batch %d%s: %ld models; gradient entries checked: "
           "%ld by complex step, %ld by differences, %ld skipped at kinks\n",
           _i + 1, parts ? " (batch 1 in parts)" : "", t.models, t.n_cs, t.n_fd, t.n_skipped);
    fflush(stdout);
    /* most entries go through the complex step; none are skipped unless
     * a kink sits within every step tried */
    ck_assert_int_gt(t.n_cs, t.n_fd);
    free(log);
}
END_TEST

/* The generator is a pure function of the seed, or seeds could not be
 * replayed. */
START_TEST(same_seed_same_model)
{
    RmModel *a = rm_generate(12345), *b = rm_generate(12345);
    RmModel *c = rm_generate(12346);
    ck_assert_str_eq(a->text, b->text);
    ck_assert_str_ne(a->text, c->text);
    ck_assert_int_eq(a->nparam, b->nparam);
    for (long k = 0; k < a->nparam; k++)
        ck_assert(a->param[k] == b->param[k]);
    rm_free(a);
    rm_free(b);
    rm_free(c);
}
END_TEST

/* Does the subtree at id hold a reduction? */
static int has_reduction(const RmModel *m, int id)
{
    const RmNode *n = &m->node[id];
    int found = n->kind == RK_RED;
    for (int k = 0; k < n->narg && !found; k++)
        found = has_reduction(m, n->arg[k]);
    return found;
}

/* The CI seeds exercise every builtin, every reduction, every condition
 * operator and all three forms of definition; a generator that drifted
 * into a corner would otherwise go on passing. */
START_TEST(ci_seeds_cover_the_language)
{
    int func[RF_COUNT] = {0}, red[4] = {0}, cmp[6] = {0}, logic[3] = {0};
    int form[3] = {0}, multi = 0, nested = 0, sel = 0, power = 0;
    for (int s = 0; s < BATCHES * BATCH_SIZE; s++) {
        RmModel *m = rm_generate(FIRST_SEED + (uint64_t)s);
        for (int i = 0; i < m->nnode; i++) {
            const RmNode *n = &m->node[i];
            switch (n->kind) {
            case RK_CALL: func[n->op]++; break;
            case RK_RED:
                red[n->op]++;
                multi += n->nred > 1;
                nested += has_reduction(m, n->arg[0]);
                break;
            case RK_CMP: cmp[n->op]++; break;
            case RK_AND: logic[0]++; break;
            case RK_OR: logic[1]++; break;
            case RK_NOT: logic[2]++; break;
            case RK_SEL: sel++; break;
            case RK_BIN: power += n->op == '^'; break;
            default: break;
            }
        }
        for (int v = 0; v < m->nval; v++)
            if (m->val[v].role == RV_DEF)
                form[m->val[v].nfree ? 0 : m->val[v].rank ? 1 : 2]++;
        rm_free(m);
    }
    for (int f = 0; f < RF_COUNT; f++)
        ck_assert_msg(func[f] > 0, "no model calls %s", rm_func_name[f]);
    for (int r = 0; r < 4; r++)
        ck_assert_msg(red[r] > 0, "no model uses %s()", rm_red_name[r]);
    for (int c = 0; c < 6; c++)
        ck_assert_msg(cmp[c] > 0, "no model compares with %s", rm_cmp_name[c]);
    for (int l = 0; l < 3; l++)
        ck_assert_int_gt(logic[l], 0);
    for (int f = 0; f < 3; f++)
        ck_assert_int_gt(form[f], 0);
    ck_assert_int_gt(multi, 0);
    ck_assert_int_gt(nested, 0);
    ck_assert_int_gt(sel, 0);
    ck_assert_int_gt(power, 0);
}
END_TEST

/* ------------------------------------------------- regression models */

static glob_t regressions;

/* A model that once failed: it must now pass every check, at a point
 * drawn from [-2, 2] by a fixed seed. */
START_TEST(regression_model)
{
    const char *path = regressions.gl_pathv[_i];
    RmCase c;
    rm_case_file(&c, path, 7);
    char *dir = tu_tmpdir();
    int failed = rm_check_batch(&c, 1, dir, "");
    tu_rmdir(dir);
    free(dir);
    ck_assert_msg(failed == 0, "%s: %s", path, c.why ? c.why : "");
    ck_assert_int_gt(c.n_cs + c.n_fd, 0);
    rm_case_free(&c);
}
END_TEST

/* The regression models are found (tests run from the top directory). */
START_TEST(regression_models_present)
{
    ck_assert_msg(regressions.gl_pathc > 0, "no tests/random/*.dvs found");
}
END_TEST

static Suite *random_suite(void)
{
    Suite *s = suite_create("random_models");
    TCase *gen = tcase_create("generator");
    tcase_add_test(gen, same_seed_same_model);
    tcase_add_test(gen, ci_seeds_cover_the_language);
    suite_add_tcase(s, gen);
    TCase *models = tcase_create("generated");
    tcase_set_timeout(models, 120);
    tcase_add_loop_test(models, generated_models, 0, BATCHES + 1);
    suite_add_tcase(s, models);
    TCase *reg = tcase_create("regressions");
    tcase_set_timeout(reg, 60);
    tcase_add_test(reg, regression_models_present);
    if (glob("tests/random/*.dvs", 0, NULL, &regressions) == 0)
        tcase_add_loop_test(reg, regression_model, 0,
                            (int)regressions.gl_pathc);
    suite_add_tcase(s, reg);
    return s;
}

int main(void)
{
    int rc = tu_main(random_suite());
    globfree(&regressions);
    return rc;
}
