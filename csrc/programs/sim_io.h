/* sim_io.h - file input and small helpers shared by the simulation programs
 * (ffwd_loop.c, ffwd_plant_server.c). Programs, not core: stdio and malloc are fine,
 * but every input is checked and reported as one line naming the file and place.
 *
 * Flat model file: see ffwd/sim/flatmodel.py (written by ffwd.sim.write_model_file).
 * Trajectory CSV: a header line whose first column is t, then rows of
 * t, q_1..q_n, qd_1..qd_n, qdd_1..qdd_n (ffwd.sim.write_loop_trajectory). */
#ifndef FFWD_SIM_IO_H
#define FFWD_SIM_IO_H

#include <errno.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "ffwd.h"

#define SIO_MAX_FILE (64L * 1024L * 1024L)
#define SIO_TOKEN 128

/* Prints "<prog>: error: <message>" and exits with status 2. */
static inline void sio_die(const char *prog, const char *fmt, ...)
{
    va_list ap;
    fprintf(stderr, "%s: error: ", prog);
    va_start(ap, fmt);
    vfprintf(stderr, fmt, ap);
    va_end(ap);
    fputc('\n', stderr);
    exit(2);
}

static inline int64_t sio_now_ns(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (int64_t)ts.tv_sec * 1000000000LL + (int64_t)ts.tv_nsec;
}

/* Whole file into a NUL-terminated buffer (caller frees); NULL and errno text on failure. */
static inline char *sio_read_file(const char *path, const char **why)
{
    FILE *f = fopen(path, "rb");
    char *buf;
    long size;
    size_t got;
    if (f == NULL) {
        *why = strerror(errno);
        return NULL;
    }
    if (fseek(f, 0, SEEK_END) != 0 || (size = ftell(f)) < 0 || fseek(f, 0, SEEK_SET) != 0) {
        *why = "cannot determine the file size";
        fclose(f);
        return NULL;
    }
    if (size > SIO_MAX_FILE) {
        *why = "file too large (over 64 MiB)";
        fclose(f);
        return NULL;
    }
    buf = (char *)malloc((size_t)size + 1u);
    if (buf == NULL) {
        *why = "out of memory";
        fclose(f);
        return NULL;
    }
    got = fread(buf, 1, (size_t)size, f);
    fclose(f);
    if (got != (size_t)size) {
        *why = "read error";
        free(buf);
        return NULL;
    }
    buf[size] = '\0';
    if (memchr(buf, '\0', (size_t)size) != NULL) {
        *why = "binary data (NUL byte) in a text file";
        free(buf);
        return NULL;
    }
    return buf;
}

/* One number; 0 on success. The whole text must be the number and finite. */
static inline int sio_number(const char *text, double *out)
{
    char *end = NULL;
    double v;
    if (text[0] == '\0') {
        return 1;
    }
    errno = 0;
    v = strtod(text, &end);
    if (end == text || *end != '\0' || errno == ERANGE || !(v - v == 0.0)) {
        return 1;
    }
    *out = v;
    return 0;
}

/* ---- flat model file -------------------------------------------------------- */

typedef struct sio_tokens {
    const char *prog;
    const char *path;
    const char *p;
    int line;
    char tok[SIO_TOKEN];
} sio_tokens;

/* Next white-space separated token ('#' comments skipped) into t->tok; 0 at the end. */
static inline int sio_next(sio_tokens *t)
{
    size_t k = 0;
    for (;;) {
        while (*t->p == ' ' || *t->p == '\t' || *t->p == '\r' || *t->p == '\n') {
            if (*t->p == '\n') {
                t->line += 1;
            }
            t->p += 1;
        }
        if (*t->p == '#') {
            while (*t->p != '\0' && *t->p != '\n') {
                t->p += 1;
            }
            continue;
        }
        break;
    }
    if (*t->p == '\0') {
        t->tok[0] = '\0';
        return 0;
    }
    while (*t->p != '\0' && *t->p != ' ' && *t->p != '\t' && *t->p != '\r' && *t->p != '\n'
           && *t->p != '#') {
        if (k + 1u >= sizeof t->tok) {
            sio_die(t->prog, "%s:%d: token too long", t->path, t->line);
        }
        t->tok[k++] = *t->p++;
    }
    t->tok[k] = '\0';
    return 1;
}

static inline void sio_expect(sio_tokens *t, const char *word)
{
    if (!sio_next(t) || strcmp(t->tok, word) != 0) {
        sio_die(t->prog, "%s:%d: expected '%s', found '%s'", t->path, t->line, word,
                t->tok[0] != '\0' ? t->tok : "end of file");
    }
}

static inline double sio_real(sio_tokens *t, const char *what, int joint)
{
    double v = 0.0;
    if (!sio_next(t)) {
        sio_die(t->prog, "%s: unexpected end of file reading %s", t->path, what);
    }
    if (sio_number(t->tok, &v) != 0) {
        if (joint >= 0) {
            sio_die(t->prog, "%s:%d: joint %d field '%s': not a finite number: '%s'", t->path,
                    t->line, joint, what, t->tok);
        }
        sio_die(t->prog, "%s:%d: field '%s': not a finite number: '%s'", t->path, t->line, what,
                t->tok);
    }
    return v;
}

static inline long sio_int(sio_tokens *t, const char *what, int joint, long lo, long hi)
{
    double v = sio_real(t, what, joint);
    if (v < (double)lo || v > (double)hi || v != (double)(long)v) {
        if (joint >= 0) {
            sio_die(t->prog, "%s:%d: joint %d field '%s': must be an integer in %ld..%ld, got %s",
                    t->path, t->line, joint, what, lo, hi, t->tok);
        }
        sio_die(t->prog, "%s:%d: field '%s': must be an integer in %ld..%ld, got %s", t->path,
                t->line, what, lo, hi, t->tok);
    }
    return (long)v;
}

static inline void sio_reals(sio_tokens *t, ffwd_real *out, int n, const char *what, int joint)
{
    int i;
    for (i = 0; i < n; ++i) {
        out[i] = (ffwd_real)sio_real(t, what, joint);
    }
}

/* Reads and checks a flat model file into m; exits with a located message on error. */
static inline void sio_load_model(const char *prog, const char *path, ffwd_model *m)
{
    const char *why = NULL;
    char *text = sio_read_file(path, &why);
    sio_tokens t;
    long dof;
    int i;
    ffwd_status s;
    if (text == NULL) {
        sio_die(prog, "%s: %s", path, why);
    }
    memset(m, 0, sizeof *m);
    t.prog = prog;
    t.path = path;
    t.p = text;
    t.line = 1;
    sio_expect(&t, "ffwd-flat-model");
    if (sio_int(&t, "version", -1, 0, 1000) != 1) {
        sio_die(prog, "%s:%d: unsupported flat model version %s (this program reads 1)", path,
                t.line, t.tok);
    }
    sio_expect(&t, "dof");
    dof = sio_int(&t, "dof", -1, 1, FFWD_MAX_DOF);
    m->dof = (uint32_t)dof;
    sio_expect(&t, "gravity");
    sio_reals(&t, m->gravity, 3, "gravity", -1);
    for (i = 0; i < (int)dof; ++i) {
        ffwd_joint *j = &m->joint[i];
        sio_expect(&t, "joint");
        if (sio_int(&t, "index", i, 0, FFWD_MAX_DOF) != i) {
            sio_die(prog, "%s:%d: joint lines out of order: expected index %d", path, t.line, i);
        }
        j->type = (int32_t)sio_int(&t, "type", i, 0, 1);
        j->parent = (int32_t)sio_int(&t, "parent", i, -1, FFWD_MAX_DOF);
        sio_reals(&t, j->rot, 9, "rot", i);
        sio_reals(&t, j->pos, 3, "pos", i);
        sio_reals(&t, j->axis, 3, "axis", i);
        sio_reals(&t, j->inertia, 10, "inertia", i);
        j->armature = (ffwd_real)sio_real(&t, "armature", i);
        j->viscous = (ffwd_real)sio_real(&t, "viscous", i);
        j->coulomb = (ffwd_real)sio_real(&t, "coulomb", i);
        j->coulomb_band = (ffwd_real)sio_real(&t, "coulomb_band", i);
        j->has_limits = (uint32_t)sio_int(&t, "has_limits", i, 0, 31);
        j->q_min = (ffwd_real)sio_real(&t, "q_min", i);
        j->q_max = (ffwd_real)sio_real(&t, "q_max", i);
        j->v_max = (ffwd_real)sio_real(&t, "v_max", i);
        j->a_max = (ffwd_real)sio_real(&t, "a_max", i);
        j->j_max = (ffwd_real)sio_real(&t, "j_max", i);
        j->tau_max = (ffwd_real)sio_real(&t, "tau_max", i);
    }
    sio_expect(&t, "tool");
    m->tool_parent = (int32_t)sio_int(&t, "tool_parent", -1, 0, FFWD_MAX_DOF - 1);
    sio_reals(&t, m->tool_rot, 9, "tool_rot", -1);
    sio_reals(&t, m->tool_pos, 3, "tool_pos", -1);
    sio_expect(&t, "payload");
    sio_reals(&t, m->payload, 10, "payload", -1);
    sio_expect(&t, "end");
    if (sio_next(&t)) {
        sio_die(prog, "%s:%d: unexpected text after 'end': '%s'", path, t.line, t.tok);
    }
    free(text);
    s = ffwd_model_check(m);
    if (s != FFWD_OK) {
        sio_die(prog, "%s: model check failed: %s", path, ffwd_status_str(s));
    }
}

/* ---- trajectory CSV ------------------------------------------------------------ */

typedef struct sio_traj {
    long n;          /* samples */
    uint32_t dof;
    double *t;       /* n */
    double *q;       /* n x dof */
    double *qd;
    double *qdd;
} sio_traj;

static inline void sio_free_traj(sio_traj *tr)
{
    free(tr->t);
    free(tr->q);
    free(tr->qd);
    free(tr->qdd);
    memset(tr, 0, sizeof *tr);
}

/* Reads t, q, qd, qdd rows for dof joints; the time step must equal `period` (1e-6
 * relative); exits with a located message on error. */
static inline void sio_load_traj(const char *prog, const char *path, uint32_t dof, double period,
                          sio_traj *tr)
{
    const char *why = NULL;
    char *text = sio_read_file(path, &why);
    char *line;
    char *next;
    long cap = 0;
    long row = 0;
    int lineno = 1;
    const long cols = 1L + 3L * (long)dof;
    if (text == NULL) {
        sio_die(prog, "%s: %s", path, why);
    }
    memset(tr, 0, sizeof *tr);
    tr->dof = dof;
    for (cap = 1, line = text; *line != '\0'; ++line) {
        cap += *line == '\n';
    }
    tr->t = (double *)malloc((size_t)cap * sizeof(double));
    tr->q = (double *)malloc((size_t)cap * dof * sizeof(double));
    tr->qd = (double *)malloc((size_t)cap * dof * sizeof(double));
    tr->qdd = (double *)malloc((size_t)cap * dof * sizeof(double));
    if (tr->t == NULL || tr->q == NULL || tr->qd == NULL || tr->qdd == NULL) {
        sio_die(prog, "%s: out of memory", path);
    }
    line = text;
    /* header: first field must be t */
    next = strchr(line, '\n');
    if (next != NULL) {
        *next = '\0';
    }
    if (strncmp(line, "t,", 2) != 0 && strcmp(line, "t") != 0 && strcmp(line, "t\r") != 0) {
        sio_die(prog, "%s:1: header must start with column 't'", path);
    }
    line = next != NULL ? next + 1 : line + strlen(line);
    while (*line != '\0') {
        long c = 0;
        char *field = line;
        ++lineno;
        next = strchr(line, '\n');
        if (next != NULL) {
            *next = '\0';
        }
        if (strspn(line, " \t\r") == strlen(line)) {
            line = next != NULL ? next + 1 : line + strlen(line);
            continue;
        }
        for (;;) {
            char *comma = strchr(field, ',');
            char cell[SIO_TOKEN];
            size_t len = comma != NULL ? (size_t)(comma - field) : strlen(field);
            double v = 0.0;
            while (len > 0 && (field[len - 1] == '\r' || field[len - 1] == ' ')) {
                --len;
            }
            while (len > 0 && *field == ' ') {
                ++field;
                --len;
            }
            if (len >= sizeof cell) {
                sio_die(prog, "%s:%d: column %ld: field too long", path, lineno, c + 1);
            }
            memcpy(cell, field, len);
            cell[len] = '\0';
            if (c >= cols) {
                sio_die(prog, "%s:%d: more than %ld columns (t, then q, qd, qdd for %u joints)",
                        path, lineno, cols, dof);
            }
            if (sio_number(cell, &v) != 0) {
                sio_die(prog, "%s:%d: column %ld: not a finite number: '%s'", path, lineno,
                        c + 1, cell);
            }
            if (c == 0) {
                tr->t[row] = v;
            } else if (c <= (long)dof) {
                tr->q[row * (long)dof + c - 1] = v;
            } else if (c <= 2L * (long)dof) {
                tr->qd[row * (long)dof + c - 1 - (long)dof] = v;
            } else {
                tr->qdd[row * (long)dof + c - 1 - 2L * (long)dof] = v;
            }
            ++c;
            if (comma == NULL) {
                break;
            }
            field = comma + 1;
        }
        if (c != cols) {
            sio_die(prog, "%s:%d: %ld columns, expected %ld (t, then q, qd, qdd for %u joints)",
                    path, lineno, c, cols, dof);
        }
        if (row > 0) {
            double step = tr->t[row] - tr->t[row - 1];
            if (step <= 0.0 || (step - period > 1e-6 * period) || (period - step > 1e-6 * period)) {
                sio_die(prog, "%s:%d: time step %.9g s does not match the loop period %.9g s",
                        path, lineno, step, period);
            }
        }
        ++row;
        line = next != NULL ? next + 1 : line + strlen(line);
    }
    free(text);
    if (row < 2) {
        sio_die(prog, "%s: needs at least 2 samples, found %ld", path, row);
    }
    tr->n = row;
}

/* Comma-separated list of n numbers (or one number for all) into out. */
static inline void sio_list(const char *prog, const char *opt, const char *text, double *out, uint32_t n)
{
    char buf[1024];
    char *field;
    uint32_t k = 0;
    if (strlen(text) >= sizeof buf) {
        sio_die(prog, "%s: list too long", opt);
    }
    strcpy(buf, text);
    field = buf;
    for (;;) {
        char *comma = strchr(field, ',');
        if (comma != NULL) {
            *comma = '\0';
        }
        if (k >= n) {
            sio_die(prog, "%s: more than %u values", opt, n);
        }
        if (sio_number(field, &out[k]) != 0) {
            sio_die(prog, "%s: not a finite number: '%s'", opt, field);
        }
        ++k;
        if (comma == NULL) {
            break;
        }
        field = comma + 1;
    }
    if (k == 1u) {
        for (; k < n; ++k) {
            out[k] = out[0];
        }
    }
    if (k != n) {
        sio_die(prog, "%s: %u values, expected 1 or %u", opt, k, n);
    }
}

/* A number option within [lo, hi]. */
static inline double sio_opt(const char *prog, const char *opt, const char *text, double lo, double hi)
{
    double v = 0.0;
    if (text == NULL) {
        sio_die(prog, "%s: missing value", opt);
    }
    if (sio_number(text, &v) != 0 || v < lo || v > hi) {
        sio_die(prog, "%s: expected a number in %g..%g, got '%s'", opt, lo, hi, text);
    }
    return v;
}

#endif /* FFWD_SIM_IO_H */
