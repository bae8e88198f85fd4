/* ffwd-plant-server - the simulated arm behind a UDP socket (docs/sim.md).
 *
 * A controller (Python, C, or a board on the network) sends command frames with one
 * torque per joint; the server steps the plant and answers with the measured state.
 * Frame layout: sim_frame.h. Every datagram is answered: a state frame (kind 2,
 * values t, q[n], qd[n], tau[n]) for an accepted command, a stats frame for a stats
 * request, or a reject frame (kind 5, one value: the reason code). Rejected frames
 * never move the plant; they are counted by reason.
 *
 * Modes: lockstep (default) steps the plant once per accepted command, so a run is
 * reproducible; realtime steps it on the server's clock at --rate with the latest
 * command held (braked until the first command).
 * Watchdog: no accepted command for --watchdog-ms while running -> the brake holds
 * the arm (qd = 0, q held, gravity held by the brake); the next command releases it.
 *
 * Output: "listening <addr> <port>" on stdout at start, the stats as one JSON line
 * at the end (SIGINT/SIGTERM, --max-frames or --duration). */
#define _GNU_SOURCE
#include <arpa/inet.h>
#include <fcntl.h>
#include <netinet/in.h>
#include <poll.h>
#include <signal.h>
#include <sys/socket.h>
#include <unistd.h>

#include "sim_frame.h"
#include "sim_io.h"

static const char *PROG = "ffwd-plant-server";
static volatile sig_atomic_t g_stop = 0;

static void on_signal(int sig)
{
    (void)sig;
    g_stop = 1;
}

typedef struct server_stats {
    uint64_t received;
    uint64_t accepted;
    uint64_t rejected[SF_REASONS];
    uint64_t stats_requests;
    uint64_t watchdog_trips;
} server_stats;

static const char *REASON_NAMES[SF_REASONS] = {
    "ok", "short", "oversized", "malformed", "bad_version", "bad_checksum", "duplicate",
    "out_of_order"};

static void usage(void)
{
    printf("usage: %s --model FILE [options]\n"
           "  --model FILE        flat model file of the plant (ffwd.sim.write_model_file)\n"
           "  --bind ADDR         address to listen on (default 127.0.0.1)\n"
           "  --port N            UDP port, 0 = any free port (default 47017)\n"
           "  --rate HZ           plant step rate (default 1000; dt = 1/rate)\n"
           "  --mode M            lockstep (default) or realtime\n"
           "  --integrator I      rk4 (default) or euler\n"
           "  --substeps N        integration sub-steps per step (default 1)\n"
           "  --delay K           measurement delay in steps (default 0)\n"
           "  --counts C          encoder counts per revolution (default 0 = exact)\n"
           "  --noise-q S         position noise standard deviation (default 0)\n"
           "  --noise-qd S        velocity noise standard deviation (default 0)\n"
           "  --seed N            noise seed (default 1)\n"
           "  --no-saturation     do not clamp torques to the torque limits\n"
           "  --q0 LIST           initial positions, comma-separated (default zeros)\n"
           "  --watchdog-ms MS    brake after this long without a command (default 100)\n"
           "  --max-frames N      exit after N datagrams (default: run until a signal)\n"
           "  --duration S        exit after S seconds (default: run until a signal)\n",
           PROG);
}

static void print_stats(FILE *out, const server_stats *st, const ffwd_plant *p)
{
    int r;
    fprintf(out, "{\"received\": %llu, \"accepted\": %llu, \"stats_requests\": %llu, \"rejected\": {",
            (unsigned long long)st->received, (unsigned long long)st->accepted,
            (unsigned long long)st->stats_requests);
    for (r = 1; r < SF_REASONS; ++r) {
        fprintf(out, "%s\"%s\": %llu", r > 1 ? ", " : "", REASON_NAMES[r],
                (unsigned long long)st->rejected[r]);
    }
    fprintf(out, "}, \"watchdog_trips\": %llu, \"steps\": %llu, \"braked_steps\": %llu, "
                 "\"saturated_steps\": %llu, \"t\": %.17g}\n",
            (unsigned long long)st->watchdog_trips, (unsigned long long)p->steps,
            (unsigned long long)p->braked_steps, (unsigned long long)p->saturated_steps,
            (double)p->t);
    fflush(out);
}

/* values of a stats frame, in this order (docs/sim.md) */
static uint16_t stats_values(const server_stats *st, const ffwd_plant *p, double *v)
{
    uint16_t k = 0;
    int r;
    v[k++] = (double)st->received;
    v[k++] = (double)st->accepted;
    for (r = 1; r < SF_REASONS; ++r) {
        v[k++] = (double)st->rejected[r];
    }
    v[k++] = (double)st->stats_requests;
    v[k++] = (double)st->watchdog_trips;
    v[k++] = (double)p->steps;
    v[k++] = (double)p->braked_steps;
    v[k++] = (double)p->saturated_steps;
    v[k++] = (double)p->t;
    return k;
}

static uint16_t state_values(const ffwd_plant *p, double *v)
{
    ffwd_real q[FFWD_MAX_DOF], qd[FFWD_MAX_DOF];
    uint32_t n = p->model->dof;
    uint32_t i;
    (void)ffwd_plant_measure(p, q, qd);
    v[0] = (double)p->t;
    for (i = 0; i < n; ++i) {
        v[1u + i] = (double)q[i];
        v[1u + n + i] = (double)qd[i];
        v[1u + 2u * n + i] = (double)p->tau[i];
    }
    return (uint16_t)(1u + 3u * n);
}

int main(int argc, char **argv)
{
    const char *model_path = NULL;
    const char *bind_addr = "127.0.0.1";
    const char *q0_text = NULL;
    double port = 47017.0;
    double rate = 1000.0;
    double watchdog_ms = 100.0;
    double max_frames = 0.0;
    double duration = 0.0;
    int realtime = 0;
    static ffwd_model model;
    static ffwd_plant plant;
    ffwd_plant_config cfg;
    ffwd_real q0[FFWD_MAX_DOF];
    double q0d[FFWD_MAX_DOF];
    server_stats st;
    struct sockaddr_in addr;
    socklen_t alen = sizeof addr;
    int fd;
    int i;
    uint32_t j;
    int running = 0;
    uint32_t last_seq = 0;
    uint32_t last_flags = 0;
    ffwd_real held[FFWD_MAX_DOF];
    int64_t start_ns, last_cmd_ns, next_tick_ns, period_ns;
    static uint8_t rx[65536];
    uint8_t tx[SF_MAX_LEN];
    double values[SF_MAX_VALUES];
    ffwd_status s;

    memset(&st, 0, sizeof st);
    (void)ffwd_plant_config_default(&cfg, (ffwd_real)1e-3);
    for (i = 1; i < argc; ++i) {
        const char *a = argv[i];
        const char *v = i + 1 < argc ? argv[i + 1] : NULL;
        if (strcmp(a, "--help") == 0 || strcmp(a, "-h") == 0) {
            usage();
            return 0;
        } else if (strcmp(a, "--no-saturation") == 0) {
            cfg.saturate = 0u;
            continue;
        }
        if (v == NULL) {
            sio_die(PROG, "%s: missing value (see --help)", a);
        }
        ++i;
        if (strcmp(a, "--model") == 0) {
            model_path = v;
        } else if (strcmp(a, "--bind") == 0) {
            bind_addr = v;
        } else if (strcmp(a, "--port") == 0) {
            port = sio_opt(PROG, a, v, 0, 65535);
        } else if (strcmp(a, "--rate") == 0) {
            rate = sio_opt(PROG, a, v, 1, 100000);
        } else if (strcmp(a, "--mode") == 0) {
            if (strcmp(v, "lockstep") == 0) {
                realtime = 0;
            } else if (strcmp(v, "realtime") == 0) {
                realtime = 1;
            } else {
                sio_die(PROG, "--mode: expected lockstep or realtime, got '%s'", v);
            }
        } else if (strcmp(a, "--integrator") == 0) {
            if (strcmp(v, "rk4") == 0) {
                cfg.integrator = FFWD_PLANT_RK4;
            } else if (strcmp(v, "euler") == 0) {
                cfg.integrator = FFWD_PLANT_EULER;
            } else {
                sio_die(PROG, "--integrator: expected rk4 or euler, got '%s'", v);
            }
        } else if (strcmp(a, "--substeps") == 0) {
            cfg.substeps = (uint32_t)sio_opt(PROG, a, v, 1, FFWD_PLANT_MAX_SUBSTEPS);
        } else if (strcmp(a, "--delay") == 0) {
            cfg.delay = (uint32_t)sio_opt(PROG, a, v, 0, FFWD_PLANT_MAX_DELAY);
        } else if (strcmp(a, "--counts") == 0) {
            cfg.counts_per_rev = (ffwd_real)sio_opt(PROG, a, v, 0, 1e12);
        } else if (strcmp(a, "--noise-q") == 0) {
            cfg.noise_q = (ffwd_real)sio_opt(PROG, a, v, 0, 1e3);
        } else if (strcmp(a, "--noise-qd") == 0) {
            cfg.noise_qd = (ffwd_real)sio_opt(PROG, a, v, 0, 1e3);
        } else if (strcmp(a, "--seed") == 0) {
            cfg.seed = (uint64_t)sio_opt(PROG, a, v, 0, 9007199254740992.0);
        } else if (strcmp(a, "--q0") == 0) {
            q0_text = v;
        } else if (strcmp(a, "--watchdog-ms") == 0) {
            watchdog_ms = sio_opt(PROG, a, v, 0.1, 3.6e6);
        } else if (strcmp(a, "--max-frames") == 0) {
            max_frames = sio_opt(PROG, a, v, 1, 1e15);
        } else if (strcmp(a, "--duration") == 0) {
            duration = sio_opt(PROG, a, v, 1e-3, 1e9);
        } else {
            sio_die(PROG, "unknown option '%s' (see --help)", a);
        }
    }
    if (model_path == NULL) {
        sio_die(PROG, "--model FILE is required (see --help)");
    }
    sio_load_model(PROG, model_path, &model);
    for (j = 0; j < FFWD_MAX_DOF; ++j) {
        q0[j] = (ffwd_real)0;
        held[j] = (ffwd_real)0;
    }
    if (q0_text != NULL) {
        sio_list(PROG, "--q0", q0_text, q0d, model.dof);
        for (j = 0; j < model.dof; ++j) {
            q0[j] = (ffwd_real)q0d[j];
        }
    }
    cfg.dt = (ffwd_real)(1.0 / rate);
    s = ffwd_plant_init(&plant, &model, &cfg, q0, NULL);
    if (s != FFWD_OK) {
        sio_die(PROG, "plant init: %s", ffwd_status_str(s));
    }
    if (realtime) {
        (void)ffwd_plant_brake(&plant, 1); /* held until the first command */
    }

    fd = socket(AF_INET, SOCK_DGRAM, 0);
    if (fd < 0) {
        sio_die(PROG, "socket: %s", strerror(errno));
    }
    memset(&addr, 0, sizeof addr);
    addr.sin_family = AF_INET;
    addr.sin_port = htons((uint16_t)port);
    if (inet_pton(AF_INET, bind_addr, &addr.sin_addr) != 1) {
        sio_die(PROG, "--bind: not an IPv4 address: '%s'", bind_addr);
    }
    if (bind(fd, (struct sockaddr *)&addr, sizeof addr) != 0) {
        sio_die(PROG, "bind %s:%d: %s", bind_addr, (int)port, strerror(errno));
    }
    if (getsockname(fd, (struct sockaddr *)&addr, &alen) != 0) {
        sio_die(PROG, "getsockname: %s", strerror(errno));
    }
    if (fcntl(fd, F_SETFL, O_NONBLOCK) != 0) {
        sio_die(PROG, "fcntl: %s", strerror(errno));
    }
    signal(SIGINT, on_signal);
    signal(SIGTERM, on_signal);
    printf("listening %s %d\n", bind_addr, (int)ntohs(addr.sin_port));
    fflush(stdout);

    period_ns = (int64_t)(1e9 / rate + 0.5);
    start_ns = sio_now_ns();
    last_cmd_ns = start_ns;
    next_tick_ns = start_ns + period_ns;
    while (!g_stop) {
        int64_t now = sio_now_ns();
        int64_t wait_ns = 100000000LL; /* wake at least every 100 ms for --duration and signals */
        struct pollfd pfd;
        struct timespec ts;
        if (duration > 0.0 && (double)(now - start_ns) >= duration * 1e9) {
            break;
        }
        if (running && !plant.braked && (double)(now - last_cmd_ns) >= watchdog_ms * 1e6) {
            (void)ffwd_plant_brake(&plant, 1);
            st.watchdog_trips += 1u;
        }
        if (realtime) {
            while (now >= next_tick_ns) {
                (void)ffwd_plant_step(&plant, held);
                next_tick_ns += period_ns;
            }
            wait_ns = next_tick_ns - now;
        }
        if (running && !plant.braked) {
            int64_t w = last_cmd_ns + (int64_t)(watchdog_ms * 1e6) - now;
            wait_ns = w < wait_ns ? w : wait_ns;
        }
        if (wait_ns < 0) {
            wait_ns = 0;
        }
        ts.tv_sec = (time_t)(wait_ns / 1000000000LL);
        ts.tv_nsec = (long)(wait_ns % 1000000000LL);
        pfd.fd = fd;
        pfd.events = POLLIN;
        pfd.revents = 0;
        if (ppoll(&pfd, 1, &ts, NULL) <= 0) {
            continue;
        }
        for (;;) {
            struct sockaddr_in from;
            socklen_t flen = sizeof from;
            ssize_t got = recvfrom(fd, rx, sizeof rx, 0, (struct sockaddr *)&from, &flen);
            sf_header h;
            sf_header out;
            size_t len;
            int why;
            if (got < 0) {
                break; /* EAGAIN: drained (other errors: try again at the next wake-up) */
            }
            st.received += 1u;
            why = sf_decode(rx, (size_t)got, &h, values);
            memset(&out, 0, sizeof out);
            out.seq = h.seq;
            out.stamp = h.stamp;
            if (why == SF_OK) {
                if (h.kind == SF_STATS_REQUEST && h.n == 0u && h.flags == 0u) {
                    st.stats_requests += 1u;
                    out.kind = SF_STATS;
                    out.n = stats_values(&st, &plant, values);
                } else if (h.kind == SF_COMMAND && h.n == model.dof && h.flags == 0u) {
                    int32_t ahead = (int32_t)(h.seq - last_seq);
                    if (running && ahead == 0) {
                        why = SF_DUPLICATE;
                    } else if (running && ahead < 0) {
                        why = SF_OUT_OF_ORDER;
                    } else {
                        ffwd_real tau[FFWD_MAX_DOF];
                        uint64_t sat_before = plant.saturated_steps;
                        for (j = 0; j < model.dof; ++j) {
                            tau[j] = (ffwd_real)values[j];
                        }
                        if (plant.braked) {
                            (void)ffwd_plant_brake(&plant, 0);
                        }
                        if (realtime) {
                            memcpy(held, tau, sizeof held);
                            s = FFWD_OK;
                        } else {
                            s = ffwd_plant_step(&plant, tau);
                        }
                        if (s != FFWD_OK) {
                            why = SF_MALFORMED; /* plant refused (e.g. blew up): never moved */
                        } else {
                            running = 1;
                            last_seq = h.seq;
                            last_cmd_ns = sio_now_ns();
                            st.accepted += 1u;
                            last_flags = (plant.saturated_steps != sat_before) ? 2u : 0u;
                            out.kind = SF_STATE;
                            out.flags = last_flags | (plant.braked ? 1u : 0u);
                            out.n = state_values(&plant, values);
                        }
                    }
                } else {
                    why = SF_MALFORMED;
                }
            }
            if (why != SF_OK) {
                st.rejected[why] += 1u;
                out.kind = SF_REJECT;
                out.n = 1u;
                out.flags = 0u;
                values[0] = (double)why;
            }
            len = sf_encode(tx, sizeof tx, &out, values);
            if (len > 0u) {
                (void)sendto(fd, tx, len, 0, (struct sockaddr *)&from, flen);
            }
            if (max_frames > 0.0 && (double)st.received >= max_frames) {
                g_stop = 1;
                break;
            }
        }
    }
    close(fd);
    print_stats(stdout, &st, &plant);
    return 0;
}
