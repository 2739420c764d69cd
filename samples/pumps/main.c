/* main.c - fits the pump failure model of pumps.dvs to an invented CSV
 * maintenance log by gradient descent on pumps_gradient, row by row with no
 * work buffer. Fails unless the fit recovers the parameters that generated
 * the log (make_data.py) within the precision its size allows. */
#include "pumps.h"
#include "sample_util.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define RATE       4.0   /* gradient descent step */
#define MAX_STEPS  5000
#define GRAD_TOL   1e-9  /* converged: the gradient's norm is below this */
#define LINE_MAX_CHARS 256
#define REPORT_MAX 20    /* malformed lines reported one by one */
#define FIELDS     4
#define HEADER     "pump,hours,bearing_temp_c,failed"

/* What make_data.py generated the log from, in the scaled units of
 * pumps.dvs; the two files must agree. */
static const double true_param[PUMPS_PARAM_COUNT] = {1.1, 0.7, -1.6};
static const char *const param_name[PUMPS_PARAM_COUNT] = {"w_hours", "w_temp", "bias"};

/* The scaling of pumps.dvs, repeated for the checks below, which use none
 * of the generated code. */
#define HOURS_MID  8000.0
#define HOURS_SPAN 4000.0
#define TEMP_MID   65.0
#define TEMP_SPAN  10.0

/* The log as columns: the generated code reads them in place. */
typedef struct pump_log {
    long rows, cap;
    double *hours, *temp, *failed;
} pump_log;

static int log_append(pump_log *log, double hours, double temp, double failed)
{
    if (log->rows == log->cap) {
        long cap = log->cap ? 2 * log->cap : 1024;
        double *h = realloc(log->hours, (size_t)cap * sizeof *h);
        double *t = h ? realloc(log->temp, (size_t)cap * sizeof *t) : NULL;
        double *f = t ? realloc(log->failed, (size_t)cap * sizeof *f) : NULL;
        if (h)
            log->hours = h;
        if (t)
            log->temp = t;
        if (!f)
            return 1;
        log->failed = f;
        log->cap = cap;
    }
    log->hours[log->rows] = hours;
    log->temp[log->rows] = temp;
    log->failed[log->rows] = failed;
    log->rows++;
    return 0;
}

static void log_free(pump_log *log)
{
    free(log->hours);
    free(log->temp);
    free(log->failed);
}

/* Splits line at commas in place; returns the number of fields, or
 * FIELDS + 1 when there are more than FIELDS. */
static int split_fields(char *line, char *field[FIELDS])
{
    int count = 0;
    for (char *at = line;; at++) {
        if (count == FIELDS)
            return FIELDS + 1;
        field[count++] = at;
        at = strchr(at, ',');
        if (!at)
            return count;
        *at = '\0';
    }
}

/* A whole field as a finite number; blanks around it are allowed. */
static const char *parse_number(const char *field, double *out)
{
    char *end;
    errno = 0;
    *out = strtod(field, &end);
    if (end == field)
        return "is not a number";
    while (*end == ' ' || *end == '\t')
        end++;
    if (*end != '\0')
        return "has characters after the number";
    if (!isfinite(*out))
        return "is not a finite number";
    if (errno == ERANGE)
        return "is out of range";
    return NULL;
}

static const char *const column_name[FIELDS] = {"pump", "hours", "bearing_temp_c", "failed"};

/* What is wrong with a line, and in which field (none: the whole line). */
typedef struct line_problem {
    const char *column, *text, *why;
} line_problem;

static int field_problem(line_problem *bad, char *const *field, int k, const char *why)
{
    bad->column = column_name[k];
    bad->text = field[k];
    bad->why = why;
    return 1;
}

/* Checks one data row and appends it; returns 0, or 1 with *bad filled. */
static int parse_row(char *line, pump_log *log, line_problem *bad)
{
    char *field[FIELDS];
    double value[FIELDS];
    const char *why;
    bad->column = NULL;
    if (split_fields(line, field) != FIELDS) {
        bad->why = "does not have the 4 comma-separated fields " HEADER;
        return 1;
    }
    if (field[0][strspn(field[0], " \t")] == '\0')
        return field_problem(bad, field, 0, "is empty");
    for (int k = 1; k < FIELDS; k++)
        if ((why = parse_number(field[k], &value[k])) != NULL)
            return field_problem(bad, field, k, why);
    if (value[1] < 0.0)
        return field_problem(bad, field, 1, "is negative");
    if (value[2] < -40.0 || value[2] > 200.0)
        return field_problem(bad, field, 2, "is outside -40..200 deg C: a sensor fault");
    if (value[3] != 0.0 && value[3] != 1.0)
        return field_problem(bad, field, 3, "is neither 0 nor 1");
    if (log_append(log, value[1], value[2], value[3])) {
        bad->why = "cannot be stored: out of memory";
        return 1;
    }
    return 0;
}

/* Removes a trailing \n or \r\n; returns 0 when the line did not fit the
 * buffer (no newline, and not the file's last line). */
static int chop_line(char *line, FILE *in)
{
    size_t len = strlen(line);
    if (len > 0 && line[len - 1] == '\n')
        line[--len] = '\0';
    else if (!feof(in))
        return 0;
    if (len > 0 && line[len - 1] == '\r')
        line[--len] = '\0';
    return 1;
}

/* Reads the whole log; reports every malformed line with its number (the
 * first REPORT_MAX of them) and returns 1 when there was any. */
static int read_log(const char *path, pump_log *log)
{
    char line[LINE_MAX_CHARS];
    long number = 0, bad = 0;
    FILE *in = fopen(path, "r");
    if (!in) {
        fprintf(stderr, "%s: cannot open: %s\n", path, strerror(errno));
        return 1;
    }
    while (fgets(line, sizeof line, in)) {
        line_problem bad_line = {NULL, NULL, NULL};
        number++;
        if (!chop_line(line, in)) {
            int c;
            while ((c = fgetc(in)) != EOF && c != '\n')
                ; /* skip the rest of the overlong line */
            bad_line.why = "is too long";
        } else if (number == 1) {
            if (strcmp(line, HEADER) != 0)
                bad_line.why = "is not the header line " HEADER;
        } else if (line[strspn(line, " \t")] != '\0') { /* blank lines carry nothing */
            parse_row(line, log, &bad_line);
        }
        if (bad_line.why && ++bad <= REPORT_MAX) {
            if (bad_line.column)
                fprintf(stderr, "%s:%ld: %s '%s' %s\n", path, number, bad_line.column,
                        bad_line.text, bad_line.why);
            else
                fprintf(stderr, "%s:%ld: the line %s\n", path, number, bad_line.why);
        }
    }
    if (ferror(in)) {
        fprintf(stderr, "%s: read error\n", path);
        bad++;
    }
    fclose(in);
    if (bad > REPORT_MAX)
        fprintf(stderr, "%s: %ld more malformed lines\n", path, bad - REPORT_MAX);
    if (bad) {
        fprintf(stderr, "%s: %ld malformed line%s: not fitting a damaged log\n", path, bad,
                bad == 1 ? "" : "s");
        return 1;
    }
    if (log->rows == 0) {
        fprintf(stderr, "%s: no data rows\n", path);
        return 1;
    }
    return 0;
}

/* The log next to this source file, so the driver runs from anywhere when
 * compiled with this file's full path (as run_samples.sh does). */
static const char *default_path(char *buf, size_t size)
{
    const char *slash = strrchr(__FILE__, '/');
    int dir = slash ? (int)(slash - __FILE__ + 1) : 0;
    if ((size_t)snprintf(buf, size, "%.*spumps.csv", dir, __FILE__) >= size)
        return "pumps.csv";
    return buf;
}

static double flat_value(const double *x, const void *ctx)
{
    pumps_param_flat p;
    memcpy(p.v, x, sizeof p.v);
    return pumps_value(&p.p, ctx, NULL);
}

static double norm(const double *v)
{
    double sum = 0.0;
    for (int k = 0; k < PUMPS_PARAM_COUNT; k++)
        sum += v[k] * v[k];
    return sqrt(sum);
}

static double chance(const double *param, double hours, double temp)
{
    double z = param[0] * (hours - HOURS_MID) / HOURS_SPAN +
               param[1] * (temp - TEMP_MID) / TEMP_SPAN + param[2];
    return 1.0 / (1.0 + exp(-z));
}

/* Standard errors of the fitted params: square roots of the diagonal of the
 * inverse Fisher information sum_i s_i (1 - s_i) x_i x_i^T, the large-sample
 * spread of a maximum-likelihood fit. Also the mean predicted chance. */
static double fisher_errors(const double *param, const pump_log *log, double *se)
{
    double info[3][3] = {{0}}, det, mean_chance = 0.0;
    for (long i = 0; i < log->rows; i++) {
        double x[3] = {(log->hours[i] - HOURS_MID) / HOURS_SPAN,
                       (log->temp[i] - TEMP_MID) / TEMP_SPAN, 1.0};
        double s = chance(param, log->hours[i], log->temp[i]);
        mean_chance += s / (double)log->rows;
        for (int a = 0; a < 3; a++)
            for (int b = 0; b < 3; b++)
                info[a][b] += s * (1.0 - s) * x[a] * x[b];
    }
    /* Diagonal of the inverse of a 3x3 matrix: cofactor over determinant. */
    det = info[0][0] * (info[1][1] * info[2][2] - info[1][2] * info[2][1]) -
          info[0][1] * (info[1][0] * info[2][2] - info[1][2] * info[2][0]) +
          info[0][2] * (info[1][0] * info[2][1] - info[1][1] * info[2][0]);
    se[0] = sqrt((info[1][1] * info[2][2] - info[1][2] * info[2][1]) / det);
    se[1] = sqrt((info[0][0] * info[2][2] - info[0][2] * info[2][0]) / det);
    se[2] = sqrt((info[0][0] * info[1][1] - info[0][1] * info[1][0]) / det);
    return mean_chance;
}

int main(int argc, char **argv)
{
    char buf[4096];
    const char *path = argc > 1 ? argv[1] : default_path(buf, sizeof buf);
    pump_log log = {0, 0, NULL, NULL, NULL};
    pumps_param_flat p = {{0.0, 0.0, 0.0}}, grad, probe = {{0.5, -0.4, -1.0}};
    double loss = 0.0, start_loss, rate = 0.0, mean_chance, se[PUMPS_PARAM_COUNT];
    int failed = 0, step;
    size_t work;

    if (read_log(path, &log)) {
        log_free(&log);
        return 1;
    }
    for (long i = 0; i < log.rows; i++)
        rate += log.failed[i] / (double)log.rows;
    printf("%s: %ld pumps, %.2f%% failed within 90 days\n", path, log.rows, 100.0 * rate);

    pumps_input in = {.n = log.rows, .hours = log.hours, .temp = log.temp,
                      .failed = log.failed};
    work = pumps_work_count(&in);
    if (work != 0) {
        printf("FAIL: pumps_work_count is %zu, expected 0 for a row-by-row gradient\n",
               work);
        log_free(&log);
        return 1;
    }
    printf("pumps_work_count = 0: the gradient runs row by row and its scratch does\n"
           "not grow with the %ld rows, so work is NULL\n",
           log.rows);

    pumps_gradient(&probe.p, &in, &grad.p, NULL);
    failed |= sample_gradcheck("pumps", flat_value, &in, probe.v, grad.v, NULL,
                               PUMPS_PARAM_COUNT, 1e-6);

    printf("\ngradient descent, step %.1f, from all params zero\n", RATE);
    printf("%6s  %12s  %12s\n", "step", "loss", "|gradient|");
    start_loss = pumps_value(&p.p, &in, NULL);
    for (step = 0; step <= MAX_STEPS; step++) {
        loss = pumps_gradient(&p.p, &in, &grad.p, NULL);
        int done = norm(grad.v) < GRAD_TOL;
        if ((step & (step - 1)) == 0 || done) /* steps 0, 1, 2, 4, 8, ... */
            printf("%6d  %12.8f  %12.3e\n", step, loss, norm(grad.v));
        if (done)
            break;
        for (int k = 0; k < PUMPS_PARAM_COUNT; k++)
            p.v[k] -= RATE * grad.v[k];
    }

    mean_chance = fisher_errors(p.v, &log, se);
    printf("\n%-8s  %8s  %8s  %9s  %16s\n", "param", "fitted", "true", "std error",
           "(fitted-true)/se");
    for (int k = 0; k < PUMPS_PARAM_COUNT; k++) {
        double off = (p.v[k] - true_param[k]) / se[k];
        printf("%-8s  %8.4f  %8.4f  %9.4f  %16.2f\n", param_name[k], p.v[k],
               true_param[k], se[k], off);
        /* Beyond 4 standard errors happens by chance once in ~16000 fits. */
        if (!(fabs(off) <= 4.0)) {
            printf("FAIL: %s is %.1f standard errors from the value that made the data\n",
                   param_name[k], off);
            failed = 1;
        }
    }
    printf("\nchance of failing within 90 days at 12000 h and 75 deg C: %.1f%% fitted, "
           "%.1f%% true\n",
           100.0 * chance(p.v, 12000.0, 75.0), 100.0 * chance(true_param, 12000.0, 75.0));
    printf("loss %.6f at the start, %.6f after %d steps\n", start_loss, loss, step);

    if (step > MAX_STEPS) {
        printf("FAIL: no convergence in %d steps (|gradient| %.1e)\n", MAX_STEPS,
               norm(grad.v));
        failed = 1;
    }
    /* At the minimum the bias gradient, mean chance minus failure rate, is
     * zero: the fit must reproduce the failure rate of its data. */
    printf("failure rate in the log %.6f, mean fitted chance %.6f\n", rate, mean_chance);
    if (!(fabs(rate - mean_chance) <= 1e-6)) {
        printf("FAIL: the fit does not reproduce the failure rate: not at a minimum\n");
        failed = 1;
    }
    log_free(&log);
    return failed;
}
