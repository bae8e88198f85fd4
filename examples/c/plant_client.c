/* plant_client.c - a small controller talking to ffwd-plant-server over UDP.
 *
 * What a board on the network would do: every cycle (absolute deadlines, CLOCK_MONOTONIC)
 * send one command frame with a torque per joint, read the state reply, and compute the
 * next torque from it. Here the controller is a joint PD towards a target pose; it has no
 * model, so gravity leaves a steady error (the feedforward is what removes it).
 *
 *   cc -std=c99 -O2 -o plant-client examples/c/plant_client.c
 *   ffwd simulate serve examples/robots/six_axis.toml &       (or ffwd-plant-server --model ...)
 *   ./plant-client 127.0.0.1 47017 6 2000 0.3 800 40
 *     arguments: host port dof cycles target_rad kp kd   (rate 1 kHz)
 *
 * Self-contained on purpose (the frame is small): the layout is in docs/sim.md.
 * Prints one line per 500 cycles and a summary: cycles, rejected replies, timeouts,
 * round-trip p50/max in microseconds, final q. Exit 0 when every command was accepted. */
#define _POSIX_C_SOURCE 200112L
#include <arpa/inet.h>
#include <errno.h>
#include <netinet/in.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/socket.h>
#include <sys/time.h>
#include <time.h>
#include <unistd.h>

#define MAX_DOF 16
#define MAX_VALUES (1 + 3 * MAX_DOF)
#define FRAME_MAX (28 + 8 * MAX_VALUES)

static uint32_t crc32_ieee(const uint8_t *p, size_t n)
{
    uint32_t c = 0xFFFFFFFFu;
    size_t i;
    int k;
    for (i = 0; i < n; ++i) {
        c ^= p[i];
        for (k = 0; k < 8; ++k) {
            c = (c >> 1) ^ (0xEDB88320u & (0u - (c & 1u)));
        }
    }
    return c ^ 0xFFFFFFFFu;
}

static void put_le(uint8_t *p, uint64_t v, int bytes)
{
    int i;
    for (i = 0; i < bytes; ++i) {
        p[i] = (uint8_t)(v >> (8 * i));
    }
}

static uint64_t get_le(const uint8_t *p, int bytes)
{
    uint64_t v = 0;
    int i;
    for (i = bytes - 1; i >= 0; --i) {
        v = (v << 8) | p[i];
    }
    return v;
}

/* command frame: kind 1, n torques */
static size_t encode_command(uint8_t *buf, uint32_t seq, uint64_t stamp, const double *tau, int n)
{
    size_t len = 28u + 8u * (size_t)n;
    int i;
    memcpy(buf, "FFWD", 4);
    buf[4] = 1;                         /* version */
    buf[5] = 1;                         /* kind: command */
    put_le(buf + 6, (uint64_t)n, 2);
    put_le(buf + 8, seq, 4);
    put_le(buf + 12, 0, 4);             /* flags */
    put_le(buf + 16, stamp, 8);
    for (i = 0; i < n; ++i) {
        uint64_t bits;
        memcpy(&bits, &tau[i], 8);
        put_le(buf + 24 + 8 * i, bits, 8);
    }
    put_le(buf + len - 4, crc32_ieee(buf, len - 4), 4);
    return len;
}

/* state reply: returns 0 and fills q, qd; 1 for a reject frame; -1 for a broken frame */
static int decode_state(const uint8_t *buf, size_t len, int n, double *q, double *qd,
                        uint32_t *seq)
{
    unsigned count;
    int i;
    if (len < 28 || memcmp(buf, "FFWD", 4) != 0 || buf[4] != 1) {
        return -1;
    }
    if (crc32_ieee(buf, len - 4) != (uint32_t)get_le(buf + len - 4, 4)) {
        return -1;
    }
    count = (unsigned)get_le(buf + 6, 2);
    if (len != 28u + 8u * count) {
        return -1;
    }
    *seq = (uint32_t)get_le(buf + 8, 4);
    if (buf[5] == 5) {
        return 1;
    }
    if (buf[5] != 2 || count != (unsigned)(1 + 3 * n)) {
        return -1;
    }
    for (i = 0; i < n; ++i) {
        uint64_t a = get_le(buf + 24 + 8 * (1 + i), 8), b = get_le(buf + 24 + 8 * (1 + n + i), 8);
        memcpy(&q[i], &a, 8);
        memcpy(&qd[i], &b, 8);
    }
    return 0;
}

static int64_t now_ns(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (int64_t)ts.tv_sec * 1000000000LL + ts.tv_nsec;
}

static int cmp_ll(const void *a, const void *b)
{
    int64_t x = *(const int64_t *)a, y = *(const int64_t *)b;
    return (x > y) - (x < y);
}

int main(int argc, char **argv)
{
    struct sockaddr_in srv;
    struct timeval tv = {0, 200000};
    uint8_t tx[FRAME_MAX], rx[2048];
    double q[MAX_DOF] = {0}, qd[MAX_DOF] = {0}, tau[MAX_DOF] = {0};
    double target, kp, kd;
    int64_t *rtt, deadline;
    long cycles, k, rejected = 0, timeouts = 0, ok = 0;
    int fd, n, i;
    if (argc != 8) {
        fprintf(stderr, "usage: %s host port dof cycles target_rad kp kd\n", argv[0]);
        return 2;
    }
    n = atoi(argv[3]);
    cycles = atol(argv[4]);
    target = atof(argv[5]);
    kp = atof(argv[6]);
    kd = atof(argv[7]);
    if (n < 1 || n > MAX_DOF || cycles < 1 || cycles > 100000000L) {
        fprintf(stderr, "plant-client: dof must be 1..%d and cycles 1..1e8\n", MAX_DOF);
        return 2;
    }
    memset(&srv, 0, sizeof srv);
    srv.sin_family = AF_INET;
    srv.sin_port = htons((uint16_t)atoi(argv[2]));
    if (inet_pton(AF_INET, argv[1], &srv.sin_addr) != 1) {
        fprintf(stderr, "plant-client: not an IPv4 address: %s\n", argv[1]);
        return 2;
    }
    fd = socket(AF_INET, SOCK_DGRAM, 0);
    if (fd < 0 || setsockopt(fd, SOL_SOCKET, SO_RCVTIMEO, &tv, sizeof tv) != 0) {
        perror("plant-client: socket");
        return 2;
    }
    rtt = (int64_t *)calloc((size_t)cycles, sizeof *rtt);
    if (rtt == NULL) {
        return 2;
    }
    deadline = now_ns();
    for (k = 0; k < cycles; ++k) {
        struct timespec ts;
        int64_t sent;
        ssize_t got;
        uint32_t seq = 0;
        size_t len;
        deadline += 1000000LL; /* 1 kHz */
        ts.tv_sec = (time_t)(deadline / 1000000000LL);
        ts.tv_nsec = (long)(deadline % 1000000000LL);
        while (clock_nanosleep(CLOCK_MONOTONIC, TIMER_ABSTIME, &ts, NULL) == EINTR) {
        }
        for (i = 0; i < n; ++i) {
            tau[i] = kp * (target - q[i]) - kd * qd[i];
        }
        sent = now_ns();
        len = encode_command(tx, (uint32_t)(k + 1), (uint64_t)sent, tau, n);
        if (sendto(fd, tx, len, 0, (struct sockaddr *)&srv, sizeof srv) < 0) {
            perror("plant-client: sendto");
            return 2;
        }
        got = recv(fd, rx, sizeof rx, 0);
        if (got < 0) {
            ++timeouts;
            continue;
        }
        rtt[ok] = now_ns() - sent;
        switch (decode_state(rx, (size_t)got, n, q, qd, &seq)) {
        case 0:
            ++ok;
            break;
        case 1:
            ++rejected;
            break;
        default:
            ++timeouts;
        }
        if ((k + 1) % 500 == 0) {
            printf("cycle %ld: q[0] %.5f q[1] %.5f\n", k + 1, q[0], n > 1 ? q[1] : 0.0);
        }
    }
    qsort(rtt, (size_t)ok, sizeof *rtt, cmp_ll);
    printf("cycles %ld accepted %ld rejected %ld timeouts %ld rtt_p50_us %.1f rtt_max_us %.1f\nq",
           cycles, ok, rejected, timeouts, ok ? (double)rtt[ok / 2] / 1e3 : 0.0,
           ok ? (double)rtt[ok - 1] / 1e3 : 0.0);
    for (i = 0; i < n; ++i) {
        printf(" %.6f", q[i]);
    }
    printf("\n");
    free(rtt);
    close(fd);
    return ok == cycles ? 0 : 1;
}
