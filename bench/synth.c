/* synth.c — the synthetic event stream behind concord-gen and concord-bench.
 *
 * Per event: a true class y, a runner-up class, and a shared logit vector
 * that favours y by a random margin (some events are easy, some hard). Each
 * member adds its own Gaussian-like noise, a fixed per-class bias and a
 * sharpness factor, then takes a softmax. Probabilities are written in
 * fixed point with five decimals, and the rounding residue goes to the
 * row's largest entry, so every printed row sums to exactly 1.00000.
 * Formatting is done by hand because printf would dominate the run time. */
#include "synth.h"

#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "date.h"

#define PROB_SCALE 100000 /* five decimals */

typedef struct rng {
    uint64_t s[4];
} rng;

static uint64_t splitmix64(uint64_t *x)
{
    uint64_t z = (*x += 0x9e3779b97f4a7c15ull);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
    return z ^ (z >> 31);
}

static void rng_seed(rng *r, uint64_t seed)
{
    for (int i = 0; i < 4; i++)
        r->s[i] = splitmix64(&seed);
}

static inline uint64_t rotl(uint64_t x, int k) { return (x << k) | (x >> (64 - k)); }

/* xoshiro256** */
static inline uint64_t rng_next(rng *r)
{
    uint64_t *s = r->s;
    uint64_t out = rotl(s[1] * 5, 7) * 9;
    uint64_t t = s[1] << 17;
    s[2] ^= s[0];
    s[3] ^= s[1];
    s[1] ^= s[2];
    s[0] ^= s[3];
    s[2] ^= t;
    s[3] = rotl(s[3], 45);
    return out;
}

static inline double rng_unit(rng *r) { return (double)(rng_next(r) >> 11) * 0x1.0p-53; }

static inline int rng_below(rng *r, int n) { return (int)((rng_next(r) >> 32) % (uint64_t)n); }

/* Sum of four 16-bit uniforms, centred and scaled to unit variance: a cheap
 * bell curve, bounded at about +-3.5. */
static inline double rng_bell(rng *r)
{
    uint64_t x = rng_next(r);
    double s = (double)((x & 0xffff) + ((x >> 16) & 0xffff) + ((x >> 32) & 0xffff) + (x >> 48));
    return (s / 65536.0 - 2.0) * 1.7320508075688772;
}

void cc_synth_defaults(cc_synth_opts *o)
{
    o->n = 1000000;
    o->members = 5;
    o->classes = 10;
    o->days = 28;
    o->seed = 1;
    o->label_share = 0.3;
    o->start_day = cc_days_from_civil(2026, 11, 2);
}

const char *cc_synth_check(const cc_synth_opts *o)
{
    if (o->n < 0)
        return "--n must be >= 0";
    if (o->members < 1 || o->members > CC_SYNTH_MAX_MEMBERS)
        return "--members must be in 1..64";
    if (o->classes < 2 || o->classes > CC_SYNTH_MAX_CLASSES)
        return "--classes must be in 2..256";
    if (o->days < 1 || o->days > 3660)
        return "--days must be in 1..3660";
    if (!(o->label_share >= 0.0 && o->label_share <= 1.0))
        return "--label-share must be in [0, 1]";
    int y, mo, d;
    cc_civil_from_days(o->start_day + o->days, &y, &mo, &d);
    if (o->start_day < 0 || y > 9999)
        return "--start must lie between 1970 and 9999";
    return NULL;
}

static char *put_digits(char *p, uint64_t v, int width)
{
    char tmp[24];
    int n = 0;
    do {
        tmp[n++] = (char)('0' + v % 10);
        v /= 10;
    } while (v);
    while (n < width)
        tmp[n++] = '0';
    while (n)
        *p++ = tmp[--n];
    return p;
}

/* 8-4-4-4-12 hex digits from a hash of (seed, i): unique per event and in no
 * order, like the random request ids of a production log. Kept off the
 * generator's stream so every other byte is the same as with ordered ids. */
static char *put_uuid_like(char *p, uint64_t seed, uint64_t i)
{
    static const char hex[] = "0123456789abcdef";
    uint64_t state = seed * 0x9E3779B97F4A7C15ull ^ i, h[2];
    /* the first half is a bijection of i for a fixed seed: ids never repeat */
    h[0] = state * 0xD1B54A32D192ED03ull;
    h[0] ^= h[0] >> 29;
    h[1] = splitmix64(&state);
    for (int d = 0; d < 32; d++) {
        if (d == 8 || d == 12 || d == 16 || d == 20)
            *p++ = '-';
        *p++ = hex[(h[d / 16] >> (60 - 4 * (d % 16))) & 15];
    }
    return p;
}

static char *put_str(char *p, const char *s)
{
    size_t n = strlen(s);
    memcpy(p, s, n);
    return p + n;
}

static char *put_prob(char *p, int q)
{
    if (q >= PROB_SCALE)
        return put_str(p, "1.00000");
    *p++ = '0';
    *p++ = '.';
    return put_digits(p, (uint64_t)q, 5);
}

/* Softmax of z[0..k-1] into five-decimal integers summing to PROB_SCALE. */
static void quantize_softmax(const double *z, int k, int *q)
{
    double e[CC_SYNTH_MAX_CLASSES], mx = z[0], sum = 0.0;
    for (int c = 1; c < k; c++)
        if (z[c] > mx)
            mx = z[c];
    for (int c = 0; c < k; c++)
        sum += (e[c] = exp(z[c] - mx));
    int total = 0, top = 0;
    for (int c = 0; c < k; c++) {
        q[c] = (int)(e[c] / sum * PROB_SCALE + 0.5);
        total += q[c];
        if (q[c] > q[top])
            top = c;
    }
    q[top] += PROB_SCALE - total;
}

int cc_synth_write(FILE *out, const cc_synth_opts *o)
{
    const int m = o->members, k = o->classes;
    int id_width = 7;
    for (int64_t v = o->n; v >= 10000000; v /= 10)
        id_width++;
    size_t max_line = 128 + 36 + (size_t)id_width + (size_t)m * ((size_t)k * 8 + 3);
    size_t cap = max_line * 4 > (1u << 20) ? max_line * 4 : (1u << 20);
    char *buf = malloc(cap);
    double *bias = malloc((size_t)m * (size_t)k * sizeof *bias);
    double sharp[CC_SYNTH_MAX_MEMBERS], noise[CC_SYNTH_MAX_MEMBERS];
    if (!buf || !bias) {
        free(buf);
        free(bias);
        errno = ENOMEM;
        return -1;
    }

    rng r;
    rng_seed(&r, o->seed);
    for (int j = 0; j < m; j++) {
        sharp[j] = 0.8 + 0.6 * rng_unit(&r);
        noise[j] = 0.5 + 0.4 * rng_unit(&r);
        for (int c = 0; c < k; c++)
            bias[(size_t)j * k + c] = 0.35 * rng_bell(&r);
    }

    const double span = (double)o->days * 86400.0;
    const int64_t t0 = o->start_day * 86400;
    int64_t cached_day = INT64_MIN;
    char date[16] = {0};
    double shared[CC_SYNTH_MAX_CLASSES], z[CC_SYNTH_MAX_CLASSES];
    int q[CC_SYNTH_MAX_CLASSES];
    char *p = buf;
    int rc = 0;

    for (int64_t i = 0; i < o->n && !rc; i++) {
        int64_t ts = t0 + (int64_t)(((double)i + rng_unit(&r)) * span / (double)o->n);
        int64_t day = cc_day_of_unix(ts), sec = ts - day * 86400;
        if (day != cached_day) {
            int y, mo, d;
            cc_civil_from_days(day, &y, &mo, &d);
            char *w = put_digits(date, (uint64_t)y, 4);
            *w++ = '-';
            w = put_digits(w, (uint64_t)mo, 2);
            *w++ = '-';
            w = put_digits(w, (uint64_t)d, 2);
            *w = '\0';
            cached_day = day;
        }

        int truth = rng_below(&r, k);
        int rival = (truth + 1 + rng_below(&r, k - 1)) % k;
        double margin = 1.0 + 3.5 * rng_unit(&r), pull = 1.5 * rng_unit(&r);
        for (int c = 0; c < k; c++)
            shared[c] = 0.8 * rng_bell(&r);
        shared[truth] += margin;
        shared[rival] += pull;

        if (o->random_ids) {
            p = put_str(p, "{\"id\":\"");
            p = put_uuid_like(p, o->seed, (uint64_t)i);
        } else {
            p = put_str(p, "{\"id\":\"e");
            p = put_digits(p, (uint64_t)i + 1, id_width);
        }
        p = put_str(p, "\",\"ts\":\"");
        p = put_str(p, date);
        *p++ = 'T';
        p = put_digits(p, (uint64_t)(sec / 3600), 2);
        *p++ = ':';
        p = put_digits(p, (uint64_t)(sec / 60 % 60), 2);
        *p++ = ':';
        p = put_digits(p, (uint64_t)(sec % 60), 2);
        p = put_str(p, "Z\",\"probs\":[");
        for (int j = 0; j < m; j++) {
            const double *b = bias + (size_t)j * k;
            for (int c = 0; c < k; c++)
                z[c] = sharp[j] * (shared[c] + noise[j] * rng_bell(&r) + b[c]);
            quantize_softmax(z, k, q);
            if (j)
                *p++ = ',';
            *p++ = '[';
            for (int c = 0; c < k; c++) {
                if (c)
                    *p++ = ',';
                p = put_prob(p, q[c]);
            }
            *p++ = ']';
        }
        *p++ = ']';
        if (rng_unit(&r) < o->label_share) {
            p = put_str(p, ",\"label\":");
            p = put_digits(p, (uint64_t)truth, 1);
        }
        *p++ = '}';
        *p++ = '\n';

        if ((size_t)(p - buf) + max_line > cap) {
            if (fwrite(buf, 1, (size_t)(p - buf), out) != (size_t)(p - buf))
                rc = -1;
            p = buf;
        }
    }
    if (!rc && p > buf && fwrite(buf, 1, (size_t)(p - buf), out) != (size_t)(p - buf))
        rc = -1;
    if (!rc && fflush(out) != 0)
        rc = -1;
    free(buf);
    free(bias);
    return rc;
}

int cc_synth_parse_i64(const char *s, int64_t *out)
{
    char *end;
    errno = 0;
    long long v = strtoll(s, &end, 10);
    if (errno || end == s || *end)
        return -1;
    *out = v;
    return 0;
}

int cc_synth_parse_int(const char *s, int *out)
{
    int64_t v;
    if (cc_synth_parse_i64(s, &v) || v < -1000000000 || v > 1000000000)
        return -1;
    *out = (int)v;
    return 0;
}

int cc_synth_parse_double(const char *s, double *out)
{
    char *end;
    errno = 0;
    double v = strtod(s, &end);
    if (errno || end == s || *end)
        return -1;
    *out = v;
    return 0;
}
