/* ffwd-loop - a fixed-rate control loop on the simulated arm (docs/sim.md).
 *
 * Each cycle k, woken at the absolute deadline start + (k+1) * period
 * (clock_nanosleep, CLOCK_MONOTONIC, TIMER_ABSTIME):
 *   measure the plant (delayed, quantised, noisy sensor), compute the joint PD command
 *     tau = Kp (q_ref - q_m) + Kd (qd_ref - qd_m) [+ ffwd_inverse_dynamics(q_ref, qd_ref, qdd_ref)]
 *   with the controller's model, step the plant (its own model) by one period.
 * Recorded per cycle: wake-up latency (wake time - deadline), compute time (measure to
 * command ready), plant time (simulation step), deadline misses (cycle finished more than
 * one period after its deadline) and the tracking error q_ref - q_true.
 * Runs PD alone and PD plus feedforward (--mode both, the default) on the same plant and
 * writes one JSON document (--json FILE, default stdout).
 *
 * Optional CPU pinning (--cpu), SCHED_FIFO priority (--rt-priority) and mlockall
 * (--mlock) are applied where the OS grants them; the JSON says what was granted and
 * why not, and a note goes to stderr. --free-run skips the sleeping (as fast as possible,
 * for comparisons with the offline Python run). */
#define _GNU_SOURCE
#include <math.h>
#include <sched.h>
#include <sys/mman.h>

#include "sim_io.h"

static const char *PROG = "ffwd-loop";

typedef struct loop_opts {
    const char *model_path;
    const char *plant_path;
    const char *traj_path;
    const char *json_path;
    double rate;
    int mode; /* 0 both, 1 pd, 2 ff */
    int have_kp, have_kd;
    double kp[FFWD_MAX_DOF], kd[FFWD_MAX_DOF];
    const char *kp_text, *kd_text;
    double bandwidth;
    double settle;
    int cpu;
    int rt_priority;
    int mlock;
    int free_run;
    double hist_bin_us;
    double hist_max_us;
    ffwd_plant_config cfg;
} loop_opts;

typedef struct run_stats {
    int feedforward;
    double sq[FFWD_MAX_DOF];
    double maxe[FFWD_MAX_DOF];
    long misses;
    uint64_t saturated;
    int64_t *wake;
    int64_t *compute;
    int64_t *plant;
} run_stats;

static void usage(void)
{
    printf("usage: %s --model FILE --traj FILE [options]\n"
           "  --model FILE        controller's flat model (ffwd.sim.write_model_file)\n"
           "  --plant-model FILE  plant's flat model (default: the controller's)\n"
           "  --traj FILE         reference CSV: t, q[n], qd[n], qdd[n] at the loop period\n"
           "  --rate HZ           loop rate, 250..8000 (default 1000)\n"
           "  --mode M            both (default), pd or ff\n"
           "  --kp LIST --kd LIST joint gains (one value or one per joint); default: critically\n"
           "                      damped on the largest mass-matrix diagonal along the path\n"
           "  --bandwidth HZ      bandwidth of the default gains (default 8)\n"
           "  --settle S          hold the last reference sample S seconds more (default 0.25)\n"
           "  --integrator I      rk4 (default) or euler;  --substeps N (default 1)\n"
           "  --delay K           measurement delay in cycles (default 0)\n"
           "  --counts C          encoder counts per revolution (default 0 = exact)\n"
           "  --noise-q S --noise-qd S --seed N   sensor noise (default none, seed 1)\n"
           "  --no-saturation     do not clamp torques to the torque limits\n"
           "  --cpu N             pin to CPU N;  --rt-priority P  SCHED_FIFO priority P;  --mlock\n"
           "  --free-run          do not sleep (no timing statistics)\n"
           "  --hist-bin-us B     latency histogram bin (default 1 us);  --hist-max-us M\n"
           "  --json FILE         write the results there (default stdout)\n",
           PROG);
}

static void parse_args(int argc, char **argv, loop_opts *o)
{
    int i;
    memset(o, 0, sizeof *o);
    o->rate = 1000.0;
    o->bandwidth = 8.0;
    o->settle = 0.25;
    o->cpu = -1;
    o->rt_priority = -1;
    o->hist_bin_us = 1.0;
    (void)ffwd_plant_config_default(&o->cfg, (ffwd_real)1e-3);
    for (i = 1; i < argc; ++i) {
        const char *a = argv[i];
        const char *v = i + 1 < argc ? argv[i + 1] : NULL;
        if (strcmp(a, "--help") == 0 || strcmp(a, "-h") == 0) {
            usage();
            exit(0);
        } else if (strcmp(a, "--no-saturation") == 0) {
            o->cfg.saturate = 0u;
            continue;
        } else if (strcmp(a, "--mlock") == 0) {
            o->mlock = 1;
            continue;
        } else if (strcmp(a, "--free-run") == 0) {
            o->free_run = 1;
            continue;
        }
        if (v == NULL) {
            sio_die(PROG, "%s: missing value (see --help)", a);
        }
        ++i;
        if (strcmp(a, "--model") == 0) {
            o->model_path = v;
        } else if (strcmp(a, "--plant-model") == 0) {
            o->plant_path = v;
        } else if (strcmp(a, "--traj") == 0) {
            o->traj_path = v;
        } else if (strcmp(a, "--json") == 0) {
            o->json_path = v;
        } else if (strcmp(a, "--rate") == 0) {
            o->rate = sio_opt(PROG, a, v, 250, 8000);
        } else if (strcmp(a, "--mode") == 0) {
            if (strcmp(v, "both") == 0) {
                o->mode = 0;
            } else if (strcmp(v, "pd") == 0) {
                o->mode = 1;
            } else if (strcmp(v, "ff") == 0) {
                o->mode = 2;
            } else {
                sio_die(PROG, "--mode: expected both, pd or ff, got '%s'", v);
            }
        } else if (strcmp(a, "--kp") == 0) {
            o->kp_text = v;
        } else if (strcmp(a, "--kd") == 0) {
            o->kd_text = v;
        } else if (strcmp(a, "--bandwidth") == 0) {
            o->bandwidth = sio_opt(PROG, a, v, 0.01, 1000);
        } else if (strcmp(a, "--settle") == 0) {
            o->settle = sio_opt(PROG, a, v, 0, 3600);
        } else if (strcmp(a, "--integrator") == 0) {
            if (strcmp(v, "rk4") == 0) {
                o->cfg.integrator = FFWD_PLANT_RK4;
            } else if (strcmp(v, "euler") == 0) {
                o->cfg.integrator = FFWD_PLANT_EULER;
            } else {
                sio_die(PROG, "--integrator: expected rk4 or euler, got '%s'", v);
            }
        } else if (strcmp(a, "--substeps") == 0) {
            o->cfg.substeps = (uint32_t)sio_opt(PROG, a, v, 1, FFWD_PLANT_MAX_SUBSTEPS);
        } else if (strcmp(a, "--delay") == 0) {
            o->cfg.delay = (uint32_t)sio_opt(PROG, a, v, 0, FFWD_PLANT_MAX_DELAY);
        } else if (strcmp(a, "--counts") == 0) {
            o->cfg.counts_per_rev = (ffwd_real)sio_opt(PROG, a, v, 0, 1e12);
        } else if (strcmp(a, "--noise-q") == 0) {
            o->cfg.noise_q = (ffwd_real)sio_opt(PROG, a, v, 0, 1e3);
        } else if (strcmp(a, "--noise-qd") == 0) {
            o->cfg.noise_qd = (ffwd_real)sio_opt(PROG, a, v, 0, 1e3);
        } else if (strcmp(a, "--seed") == 0) {
            o->cfg.seed = (uint64_t)sio_opt(PROG, a, v, 0, 9007199254740992.0);
        } else if (strcmp(a, "--cpu") == 0) {
            o->cpu = (int)sio_opt(PROG, a, v, 0, CPU_SETSIZE - 1);
        } else if (strcmp(a, "--rt-priority") == 0) {
            o->rt_priority = (int)sio_opt(PROG, a, v, 1, 99);
        } else if (strcmp(a, "--hist-bin-us") == 0) {
            o->hist_bin_us = sio_opt(PROG, a, v, 0.01, 1e6);
        } else if (strcmp(a, "--hist-max-us") == 0) {
            o->hist_max_us = sio_opt(PROG, a, v, 1, 1e7);
        } else {
            sio_die(PROG, "unknown option '%s' (see --help)", a);
        }
    }
    if (o->model_path == NULL || o->traj_path == NULL) {
        sio_die(PROG, "--model FILE and --traj FILE are required (see --help)");
    }
    o->cfg.dt = (ffwd_real)(1.0 / o->rate);
    if (o->hist_max_us <= 0) {
        o->hist_max_us = fmax(200.0, 2e6 / o->rate);
    }
    if (o->hist_max_us / o->hist_bin_us > 1e6) {
        sio_die(PROG, "--hist-max-us / --hist-bin-us: more than 1e6 bins");
    }
}

/* default gains: Kp = M_jj w^2, Kd = 2 w M_jj, M_jj the largest diagonal entry over up to
 * 25 reference samples (as ffwd.sim.track.default_gains) */
static void default_gains(const ffwd_model *m, ffwd_work *w, const sio_traj *tr, double bw,
                          double *kp, double *kd)
{
    static ffwd_real M[FFWD_MAX_DOF * FFWD_MAX_DOF];
    ffwd_real q[FFWD_MAX_DOF];
    double diag[FFWD_MAX_DOF];
    double wn = 2.0 * 3.14159265358979323846 * bw;
    long count = tr->n < 25 ? tr->n : 25;
    long k;
    uint32_t i;
    uint32_t n = m->dof;
    for (i = 0; i < n; ++i) {
        diag[i] = 0.0;
    }
    for (k = 0; k < count; ++k) {
        long idx = count > 1 ? (long)((double)k * ((double)(tr->n - 1) / (double)(count - 1))) : 0;
        ffwd_status s;
        for (i = 0; i < n; ++i) {
            q[i] = (ffwd_real)tr->q[idx * (long)n + (long)i];
        }
        s = ffwd_mass_matrix(m, w, q, M);
        if (s != FFWD_OK) {
            sio_die(PROG, "mass matrix at sample %ld: %s", idx, ffwd_status_str(s));
        }
        for (i = 0; i < n; ++i) {
            diag[i] = fmax(diag[i], (double)M[i * n + i]);
        }
    }
    for (i = 0; i < n; ++i) {
        kp[i] = diag[i] * wn * wn;
        kd[i] = 2.0 * wn * diag[i];
    }
}

static void sleep_until(int64_t t_ns)
{
    struct timespec ts;
    ts.tv_sec = (time_t)(t_ns / 1000000000LL);
    ts.tv_nsec = (long)(t_ns % 1000000000LL);
    while (clock_nanosleep(CLOCK_MONOTONIC, TIMER_ABSTIME, &ts, NULL) == EINTR) {
    }
}

/* one closed-loop run over the reference (extended by the settle samples) */
static void run_loop(const loop_opts *o, const ffwd_model *ctrl, ffwd_work *w, const ffwd_model *pm,
                     const sio_traj *tr, long total, int ff, const double *kp, const double *kd,
                     run_stats *rs)
{
    static ffwd_plant plant;
    const uint32_t n = ctrl->dof;
    ffwd_real q0[FFWD_MAX_DOF], qd0[FFWD_MAX_DOF], qm[FFWD_MAX_DOF], qdm[FFWD_MAX_DOF];
    ffwd_real qr[FFWD_MAX_DOF], qdr[FFWD_MAX_DOF], qddr[FFWD_MAX_DOF], tff[FFWD_MAX_DOF];
    ffwd_real tau[FFWD_MAX_DOF], qt[FFWD_MAX_DOF];
    const int64_t period = (int64_t)(1e9 / o->rate + 0.5);
    int64_t start;
    long k;
    uint32_t i;
    ffwd_status s;
    rs->feedforward = ff;
    for (i = 0; i < n; ++i) {
        q0[i] = (ffwd_real)tr->q[i];
        qd0[i] = (ffwd_real)tr->qd[i];
        rs->sq[i] = 0.0;
        rs->maxe[i] = 0.0;
    }
    rs->misses = 0;
    s = ffwd_plant_init(&plant, pm, &o->cfg, q0, qd0);
    if (s != FFWD_OK) {
        sio_die(PROG, "plant init: %s", ffwd_status_str(s));
    }
    start = sio_now_ns();
    for (k = 0; k < total; ++k) {
        const long r = k < tr->n ? k : tr->n - 1; /* settle: hold the last sample at rest */
        const int64_t deadline = start + (k + 1) * period;
        int64_t t_wake, t_ctrl, t_end;
        if (!o->free_run) {
            sleep_until(deadline);
        }
        t_wake = sio_now_ns();
        (void)ffwd_plant_state(&plant, qt, NULL);
        (void)ffwd_plant_measure(&plant, qm, qdm);
        for (i = 0; i < n; ++i) {
            qr[i] = (ffwd_real)tr->q[r * (long)n + (long)i];
            qdr[i] = k < tr->n ? (ffwd_real)tr->qd[r * (long)n + (long)i] : (ffwd_real)0;
            qddr[i] = k < tr->n ? (ffwd_real)tr->qdd[r * (long)n + (long)i] : (ffwd_real)0;
            tff[i] = (ffwd_real)0;
        }
        if (ff) {
            s = ffwd_inverse_dynamics(ctrl, w, qr, qdr, qddr, tff);
            if (s != FFWD_OK) {
                sio_die(PROG, "cycle %ld: inverse dynamics: %s", k, ffwd_status_str(s));
            }
        }
        for (i = 0; i < n; ++i) {
            tau[i] = (ffwd_real)(kp[i] * (double)(qr[i] - qm[i]) + kd[i] * (double)(qdr[i] - qdm[i])
                                 + (double)tff[i]);
        }
        t_ctrl = sio_now_ns();
        s = ffwd_plant_step(&plant, tau);
        if (s != FFWD_OK) {
            sio_die(PROG, "cycle %ld: plant step: %s (the loop is unstable? lower the gains)", k,
                    ffwd_status_str(s));
        }
        t_end = sio_now_ns();
        for (i = 0; i < n; ++i) {
            double e = (double)qr[i] - (double)qt[i];
            rs->sq[i] += e * e;
            rs->maxe[i] = fmax(rs->maxe[i], fabs(e));
        }
        rs->wake[k] = o->free_run ? 0 : t_wake - deadline;
        rs->compute[k] = t_ctrl - t_wake;
        rs->plant[k] = t_end - t_ctrl;
        if (!o->free_run && t_end - deadline > period) {
            rs->misses += 1;
        }
    }
    rs->saturated = plant.saturated_steps;
}

static int cmp_i64(const void *a, const void *b)
{
    int64_t x = *(const int64_t *)a, y = *(const int64_t *)b;
    return (x > y) - (x < y);
}

static void json_timing(FILE *f, const char *name, int64_t *v, long n, const loop_opts *o)
{
    static const double pct[] = {50.0, 90.0, 99.0, 99.9};
    static const char *pname[] = {"p50", "p90", "p99", "p999"};
    double sum = 0.0;
    long k;
    long bins = (long)ceil(o->hist_max_us / o->hist_bin_us);
    long *hist = (long *)calloc((size_t)bins, sizeof(long));
    long over = 0;
    size_t p;
    if (hist == NULL) {
        sio_die(PROG, "out of memory");
    }
    for (k = 0; k < n; ++k) {
        double us = (double)v[k] / 1000.0;
        long b = (long)(us / o->hist_bin_us);
        sum += us;
        if (b < 0) {
            b = 0;
        }
        if (b >= bins) {
            over += 1;
        } else {
            hist[b] += 1;
        }
    }
    qsort(v, (size_t)n, sizeof *v, cmp_i64);
    fprintf(f, "      \"%s\": {\"mean\": %.3f", name, sum / (double)n);
    for (p = 0; p < sizeof pct / sizeof pct[0]; ++p) {
        long idx = (long)ceil(pct[p] / 100.0 * (double)n) - 1;
        idx = idx < 0 ? 0 : (idx >= n ? n - 1 : idx);
        fprintf(f, ", \"%s\": %.3f", pname[p], (double)v[idx] / 1000.0);
    }
    fprintf(f, ", \"max\": %.3f, \"hist_bin_us\": %.6g, \"hist\": [", (double)v[n - 1] / 1000.0,
            o->hist_bin_us);
    while (bins > 1 && hist[bins - 1] == 0) {
        --bins; /* trailing empty bins are left out */
    }
    for (k = 0; k < bins; ++k) {
        fprintf(f, "%s%ld", k ? ", " : "", hist[k]);
    }
    fprintf(f, "], \"hist_overflow\": %ld}", over);
    free(hist);
}

static void json_vec(FILE *f, const double *v, uint32_t n)
{
    uint32_t i;
    fputc('[', f);
    for (i = 0; i < n; ++i) {
        fprintf(f, "%s%.17g", i ? ", " : "", v[i]);
    }
    fputc(']', f);
}

static void json_str(FILE *f, const char *s)
{
    if (s == NULL) {
        fputs("null", f);
        return;
    }
    fputc('"', f);
    for (; *s != '\0'; ++s) {
        if (*s == '"' || *s == '\\') {
            fputc('\\', f);
        }
        fputc((unsigned char)*s >= 0x20 ? *s : '?', f);
    }
    fputc('"', f);
}

int main(int argc, char **argv)
{
    static loop_opts o;
    static ffwd_model ctrl, pm;
    static ffwd_work w;
    static sio_traj tr;
    static run_stats runs[2];
    double kp[FFWD_MAX_DOF], kd[FFWD_MAX_DOF];
    const char *cpu_err = NULL, *rt_err = NULL, *mlock_err = NULL;
    int cpu_ok = 0, rt_ok = 0, mlock_ok = 0;
    int nruns, r;
    long total;
    uint32_t i;
    FILE *out = stdout;
    ffwd_status s;

    parse_args(argc, argv, &o);
    sio_load_model(PROG, o.model_path, &ctrl);
    if (o.plant_path != NULL) {
        sio_load_model(PROG, o.plant_path, &pm);
    } else {
        pm = ctrl;
    }
    if (pm.dof != ctrl.dof) {
        sio_die(PROG, "%s: plant has %u joints, the controller's model %u", o.plant_path, pm.dof,
                ctrl.dof);
    }
    s = ffwd_work_init(&w, &ctrl);
    if (s != FFWD_OK) {
        sio_die(PROG, "%s: %s", o.model_path, ffwd_status_str(s));
    }
    sio_load_traj(PROG, o.traj_path, ctrl.dof, 1.0 / o.rate, &tr);
    if (o.kp_text != NULL || o.kd_text != NULL) {
        if (o.kp_text == NULL || o.kd_text == NULL) {
            sio_die(PROG, "--kp and --kd go together");
        }
        sio_list(PROG, "--kp", o.kp_text, kp, ctrl.dof);
        sio_list(PROG, "--kd", o.kd_text, kd, ctrl.dof);
    } else {
        default_gains(&ctrl, &w, &tr, o.bandwidth, kp, kd);
    }
    total = tr.n + (long)(o.settle * o.rate + 0.5);
    nruns = o.mode == 0 ? 2 : 1;
    for (r = 0; r < nruns; ++r) {
        runs[r].wake = (int64_t *)calloc((size_t)total, sizeof(int64_t));
        runs[r].compute = (int64_t *)calloc((size_t)total, sizeof(int64_t));
        runs[r].plant = (int64_t *)calloc((size_t)total, sizeof(int64_t));
        if (runs[r].wake == NULL || runs[r].compute == NULL || runs[r].plant == NULL) {
            sio_die(PROG, "out of memory for %ld cycles", total);
        }
    }
    if (o.cpu >= 0) {
        cpu_set_t set;
        CPU_ZERO(&set);
        CPU_SET((size_t)o.cpu, &set);
        if (sched_setaffinity(0, sizeof set, &set) == 0) {
            cpu_ok = 1;
        } else {
            cpu_err = strerror(errno);
            fprintf(stderr, "%s: note: not pinned to CPU %d (%s)\n", PROG, o.cpu, cpu_err);
        }
    }
    if (o.rt_priority > 0) {
        struct sched_param sp;
        memset(&sp, 0, sizeof sp);
        sp.sched_priority = o.rt_priority;
        if (sched_setscheduler(0, SCHED_FIFO, &sp) == 0) {
            rt_ok = 1;
        } else {
            rt_err = strerror(errno);
            fprintf(stderr, "%s: note: real-time priority %d not granted (%s)\n", PROG,
                    o.rt_priority, rt_err);
        }
    }
    if (o.mlock) {
        if (mlockall(MCL_CURRENT | MCL_FUTURE) == 0) {
            mlock_ok = 1;
        } else {
            mlock_err = strerror(errno);
            fprintf(stderr, "%s: note: memory not locked (%s)\n", PROG, mlock_err);
        }
    }
    for (r = 0; r < nruns; ++r) {
        int ff = o.mode == 0 ? r : (o.mode == 2);
        run_loop(&o, &ctrl, &w, &pm, &tr, total, ff, kp, kd, &runs[r]);
    }

    if (o.json_path != NULL) {
        out = fopen(o.json_path, "w");
        if (out == NULL) {
            sio_die(PROG, "%s: %s", o.json_path, strerror(errno));
        }
    }
    fprintf(out, "{\n  \"program\": \"ffwd-loop\",\n  \"rate_hz\": %.6g,\n  \"period_us\": %.3f,\n"
                 "  \"cycles\": %ld,\n  \"dof\": %u,\n  \"free_run\": %s,\n",
            o.rate, 1e6 / o.rate, total, ctrl.dof, o.free_run ? "true" : "false");
    fprintf(out, "  \"realtime\": {\"cpu\": ");
    if (o.cpu >= 0) {
        fprintf(out, "%d", o.cpu);
    } else {
        fputs("null", out);
    }
    fprintf(out, ", \"cpu_pinned\": %s, \"cpu_error\": ", cpu_ok ? "true" : "false");
    json_str(out, cpu_err);
    fprintf(out, ", \"rt_priority\": ");
    if (o.rt_priority > 0) {
        fprintf(out, "%d", o.rt_priority);
    } else {
        fputs("null", out);
    }
    fprintf(out, ", \"rt_granted\": %s, \"rt_error\": ", rt_ok ? "true" : "false");
    json_str(out, rt_err);
    fprintf(out, ", \"mlock\": %s, \"mlock_error\": ", mlock_ok ? "true" : "false");
    json_str(out, mlock_err);
    fprintf(out, "},\n  \"plant\": {\"integrator\": \"%s\", \"substeps\": %u, \"delay\": %u, "
                 "\"counts_per_rev\": %.17g, \"noise_q\": %.17g, \"noise_qd\": %.17g, "
                 "\"seed\": %llu, \"saturate\": %s},\n",
            o.cfg.integrator == FFWD_PLANT_RK4 ? "rk4" : "euler", o.cfg.substeps, o.cfg.delay,
            (double)o.cfg.counts_per_rev, (double)o.cfg.noise_q, (double)o.cfg.noise_qd,
            (unsigned long long)o.cfg.seed, o.cfg.saturate ? "true" : "false");
    fprintf(out, "  \"kp\": ");
    json_vec(out, kp, ctrl.dof);
    fprintf(out, ",\n  \"kd\": ");
    json_vec(out, kd, ctrl.dof);
    fprintf(out, ",\n  \"runs\": [\n");
    for (r = 0; r < nruns; ++r) {
        run_stats *rs = &runs[r];
        double rms[FFWD_MAX_DOF], all = 0.0;
        for (i = 0; i < ctrl.dof; ++i) {
            rms[i] = sqrt(rs->sq[i] / (double)total);
            all += rs->sq[i];
        }
        fprintf(out, "    {\n      \"feedforward\": %s,\n      \"rms_error\": ",
                rs->feedforward ? "true" : "false");
        json_vec(out, rms, ctrl.dof);
        fprintf(out, ",\n      \"rms_error_overall\": %.17g,\n      \"max_error\": ",
                sqrt(all / ((double)total * (double)ctrl.dof)));
        json_vec(out, rs->maxe, ctrl.dof);
        fprintf(out, ",\n      \"saturated_steps\": %llu,\n      \"deadline_misses\": %ld,\n",
                (unsigned long long)rs->saturated, rs->misses);
        json_timing(out, "wakeup_us", rs->wake, total, &o);
        fprintf(out, ",\n");
        json_timing(out, "compute_us", rs->compute, total, &o);
        fprintf(out, ",\n");
        json_timing(out, "plant_us", rs->plant, total, &o);
        fprintf(out, "\n    }%s\n", r + 1 < nruns ? "," : "");
    }
    fprintf(out, "  ]\n}\n");
    if (out != stdout) {
        fclose(out);
    }
    for (r = 0; r < nruns; ++r) {
        free(runs[r].wake);
        free(runs[r].compute);
        free(runs[r].plant);
    }
    sio_free_traj(&tr);
    return 0;
}
