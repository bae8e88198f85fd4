/* sim_frame.h - the UDP frame of the plant server (docs/sim.md, ffwd/sim/udp.py).
 *
 * All fields little-endian, no padding:
 *   offset  size  field
 *    0      4     magic, the bytes 'F' 'F' 'W' 'D'
 *    4      1     version, 1
 *    5      1     kind: 1 command, 2 state, 3 stats request, 4 stats, 5 reject
 *    6      2     n, the number of values (uint16)
 *    8      4     sequence number (uint32)
 *   12      4     flags (uint32); 0 in requests; in state frames bit 0 = braked by the
 *                 watchdog, bit 1 = torque saturated in the last step
 *   16      8     timestamp (uint64, nanoseconds; the server echoes the request's)
 *   24      8n    values (IEEE-754 binary64)
 *   24+8n   4     CRC-32 (IEEE 802.3 polynomial, as zlib's crc32) of bytes 0 .. 23+8n
 * Frame length 28 + 8n bytes; n <= SF_MAX_VALUES.
 */
#ifndef FFWD_SIM_FRAME_H
#define FFWD_SIM_FRAME_H

#include <stdint.h>
#include <string.h>

#include "ffwd.h"

#define SF_VERSION 1u
#define SF_HEADER 24u
#define SF_MIN_LEN 28u
#define SF_MAX_VALUES (1u + 3u * FFWD_MAX_DOF)
#define SF_MAX_LEN (SF_MIN_LEN + 8u * SF_MAX_VALUES)

enum { SF_COMMAND = 1, SF_STATE = 2, SF_STATS_REQUEST = 3, SF_STATS = 4, SF_REJECT = 5 };

/* reasons a frame is rejected (value of a reject frame) */
enum {
    SF_OK = 0,
    SF_SHORT = 1,         /* fewer than 28 bytes */
    SF_OVERSIZED = 2,     /* more than SF_MAX_LEN bytes */
    SF_MALFORMED = 3,     /* bad magic, unknown kind, length != 28 + 8n, wrong n, flags set, non-finite value */
    SF_BAD_VERSION = 4,   /* version != 1 */
    SF_BAD_CHECKSUM = 5,  /* CRC-32 mismatch */
    SF_DUPLICATE = 6,     /* command with the sequence number of the last accepted one */
    SF_OUT_OF_ORDER = 7,  /* command older than the last accepted one (serial-number order) */
    SF_REASONS = 8
};

typedef struct sf_header {
    uint8_t kind;
    uint16_t n;
    uint32_t seq;
    uint32_t flags;
    uint64_t stamp;
} sf_header;

static inline uint32_t sf_crc32(const uint8_t *p, size_t len)
{
    uint32_t c = 0xFFFFFFFFu;
    size_t i;
    int k;
    for (i = 0; i < len; ++i) {
        c ^= p[i];
        for (k = 0; k < 8; ++k) {
            c = (c >> 1) ^ (0xEDB88320u & (0u - (c & 1u)));
        }
    }
    return c ^ 0xFFFFFFFFu;
}

static inline void sf_put32(uint8_t *p, uint32_t v)
{
    p[0] = (uint8_t)(v & 0xFFu);
    p[1] = (uint8_t)((v >> 8) & 0xFFu);
    p[2] = (uint8_t)((v >> 16) & 0xFFu);
    p[3] = (uint8_t)((v >> 24) & 0xFFu);
}

static inline void sf_put64(uint8_t *p, uint64_t v)
{
    sf_put32(p, (uint32_t)(v & 0xFFFFFFFFu));
    sf_put32(p + 4, (uint32_t)(v >> 32));
}

static inline uint32_t sf_get32(const uint8_t *p)
{
    return (uint32_t)p[0] | ((uint32_t)p[1] << 8) | ((uint32_t)p[2] << 16) | ((uint32_t)p[3] << 24);
}

static inline uint64_t sf_get64(const uint8_t *p)
{
    return (uint64_t)sf_get32(p) | ((uint64_t)sf_get32(p + 4) << 32);
}

/* Writes a frame into buf (cap bytes); returns its length, 0 if it does not fit. */
static inline size_t sf_encode(uint8_t *buf, size_t cap, const sf_header *h, const double *values)
{
    size_t len = SF_MIN_LEN + 8u * (size_t)h->n;
    uint32_t i;
    if (h->n > SF_MAX_VALUES || len > cap) {
        return 0;
    }
    buf[0] = 'F';
    buf[1] = 'F';
    buf[2] = 'W';
    buf[3] = 'D';
    buf[4] = (uint8_t)SF_VERSION;
    buf[5] = h->kind;
    buf[6] = (uint8_t)(h->n & 0xFFu);
    buf[7] = (uint8_t)(h->n >> 8);
    sf_put32(buf + 8, h->seq);
    sf_put32(buf + 12, h->flags);
    sf_put64(buf + 16, h->stamp);
    for (i = 0; i < h->n; ++i) {
        uint64_t bits;
        memcpy(&bits, &values[i], sizeof bits);
        sf_put64(buf + SF_HEADER + 8u * i, bits);
    }
    sf_put32(buf + len - 4u, sf_crc32(buf, len - 4u));
    return len;
}

/* Checks a received frame and decodes it; returns SF_OK or the reason (never reads
 * beyond len). values must hold SF_MAX_VALUES. The header is filled as far as it
 * could be read (seq is 0 for frames shorter than 12 bytes). */
static inline int sf_decode(const uint8_t *buf, size_t len, sf_header *h, double *values)
{
    uint32_t i;
    memset(h, 0, sizeof *h);
    if (len >= 12u) {
        h->seq = sf_get32(buf + 8);
    }
    if (len < SF_MIN_LEN) {
        return SF_SHORT;
    }
    if (len > SF_MAX_LEN) {
        return SF_OVERSIZED;
    }
    if (buf[0] != 'F' || buf[1] != 'F' || buf[2] != 'W' || buf[3] != 'D') {
        return SF_MALFORMED;
    }
    if (buf[4] != SF_VERSION) {
        return SF_BAD_VERSION;
    }
    if (sf_crc32(buf, len - 4u) != sf_get32(buf + len - 4u)) {
        return SF_BAD_CHECKSUM;
    }
    h->kind = buf[5];
    h->n = (uint16_t)(buf[6] | (buf[7] << 8));
    h->flags = sf_get32(buf + 12);
    h->stamp = sf_get64(buf + 16);
    if (h->n > SF_MAX_VALUES || len != SF_MIN_LEN + 8u * (size_t)h->n) {
        return SF_MALFORMED;
    }
    if (h->kind < SF_COMMAND || h->kind > SF_REJECT) {
        return SF_MALFORMED;
    }
    for (i = 0; i < h->n; ++i) {
        uint64_t bits = sf_get64(buf + SF_HEADER + 8u * i);
        double v;
        memcpy(&v, &bits, sizeof v);
        if (!(v - v == 0.0)) {
            return SF_MALFORMED;
        }
        values[i] = v;
    }
    return SF_OK;
}

#endif /* FFWD_SIM_FRAME_H */
