/* test_payload_stress.c - lock-free payload swap under load: one writer thread keeps
 * alternating two payloads while the reader thread computes the gravity torque again and
 * again; every result must equal exactly (bit for bit) one of the two torque vectors
 * computed beforehand with each payload alone. A torn payload would give a third value.
 * Reads: FFWD_STRESS_READS (default 10 million). */
#define _POSIX_C_SOURCE 200809L
#include <pthread.h>
#include <sched.h>
#include <stdatomic.h>
#include "test_util.h"

#define N 6u

static ffwd_model g_model;
static ffwd_payload_box g_box;
static atomic_int g_stop;
static long g_writes = 0;
static int g_write_errors = 0;
static const ffwd_real g_mass[2] = { (ffwd_real)1.5, (ffwd_real)4.0 };
static const ffwd_real g_com[2][3] = { { (ffwd_real)0.01, (ffwd_real)0.02, (ffwd_real)0.05 },
                                       { (ffwd_real)-0.03, (ffwd_real)0.0, (ffwd_real)0.12 } };
static const ffwd_real g_inertia[2][6] = { { (ffwd_real)0.004, 0, 0, (ffwd_real)0.005, 0, (ffwd_real)0.003 },
                                           { (ffwd_real)0.02, (ffwd_real)0.001, 0, (ffwd_real)0.03, 0, (ffwd_real)0.025 } };

static void *writer(void *arg)
{
    long k = 0;
    (void)arg;
    while (!atomic_load(&g_stop)) {
        int p = (int)(k & 1);
        if (ffwd_payload_set(&g_box, &g_model, g_mass[p], g_com[p], g_inertia[p]) != FFWD_OK)
            g_write_errors++;
        k++;
    }
    g_writes = k;
    return NULL;
}

int main(void)
{
    static ffwd_work w;
    ffwd_real q[N], ref[2][N], tau[N];
    long reads = 10000000L, i, seen[2] = { 0, 0 }, switches = 0, bad = 0;
    int last = -1, p;
    pthread_t th;
    const char *env = getenv("FFWD_STRESS_READS");
    if (env != NULL && atol(env) > 0)
        reads = atol(env);
    rand_model(&g_model, N, 0, 0);
    CHECK(ffwd_work_init(&w, &g_model) == FFWD_OK, "model rejected");
    CHECK(ffwd_payload_init(&g_box, &g_model) == FFWD_OK, "payload init");
    CHECK(ffwd_work_use_payload(&w, &g_box) == FFWD_OK, "use payload");
    for (i = 0; i < (long)N; i++)
        q[i] = (ffwd_real)srand1(2);
    for (p = 0; p < 2; p++) {
        CHECK(ffwd_payload_set(&g_box, &g_model, g_mass[p], g_com[p], g_inertia[p]) == FFWD_OK, "set %d", p);
        CHECK(ffwd_gravity_torque(&g_model, &w, q, ref[p]) == FFWD_OK, "reference %d", p);
    }
    CHECK(memcmp(ref[0], ref[1], sizeof ref[0]) != 0, "the two payloads give the same torque");
    atomic_store(&g_stop, 0);
    if (pthread_create(&th, NULL, writer, NULL) != 0) {
        fprintf(stderr, "cannot start the writer thread\n");
        return 1;
    }
    /* the reads; then, if one payload was never seen (a scheduler that ran the writer
     * rarely, e.g. valgrind's serialised threads), more checked reads with a yield in
     * between so the writer gets the CPU, until both were seen (bounded) */
    for (i = 0; i < reads + 100000L; i++) {
        int which;
        if (i >= reads) {
            if (seen[0] > 0 && seen[1] > 0)
                break;
            sched_yield();
        }
        if (ffwd_gravity_torque(&g_model, &w, q, tau) != FFWD_OK) { bad++; continue; }
        which = memcmp(tau, ref[0], sizeof tau) == 0 ? 0 : memcmp(tau, ref[1], sizeof tau) == 0 ? 1 : -1;
        if (which < 0) { bad++; continue; }
        seen[which]++;
        if (which != last) switches++;
        last = which;
    }
    reads = i;
    atomic_store(&g_stop, 1);
    pthread_join(th, NULL);
    g_checks++;
    if (bad) { g_fail++; fprintf(stderr, "FAIL: %ld of %ld reads matched neither payload\n", bad, reads); }
    CHECK(g_write_errors == 0, "%d writes failed", g_write_errors);
    CHECK(seen[0] > 0 && seen[1] > 0, "reader saw only one payload (%ld / %ld)", seen[0], seen[1]);
    printf("test_payload_stress: %ld reads (%ld payload A, %ld payload B, %ld changes seen), %ld writes, %ld mismatches\n",
           reads, seen[0], seen[1], switches, g_writes, bad);
    return finish("test_payload_stress");
}
