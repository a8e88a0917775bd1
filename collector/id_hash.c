/* id_hash.c — SipHash-2-4, the hash behind the store's id index
 * (cc_sq_id_hash in store.c builds the index key from it). */
#include "id_hash.h"

#define ROTL(x, b) (uint64_t)(((x) << (b)) | ((x) >> (64 - (b))))

static uint64_t load_le64(const uint8_t *p)
{
    uint64_t v = 0;
    for (int i = 7; i >= 0; i--)
        v = (v << 8) | p[i];
    return v;
}

/* One SipRound (the paper's section 2, figure 2). */
#define SIPROUND                                                                               \
    do {                                                                                       \
        v0 += v1; v1 = ROTL(v1, 13); v1 ^= v0; v0 = ROTL(v0, 32);                              \
        v2 += v3; v3 = ROTL(v3, 16); v3 ^= v2;                                                 \
        v0 += v3; v3 = ROTL(v3, 21); v3 ^= v0;                                                 \
        v2 += v1; v1 = ROTL(v1, 17); v1 ^= v2; v2 = ROTL(v2, 32);                              \
    } while (0)

uint64_t cc_siphash24(const uint8_t key[16], const void *msg, size_t len)
{
    const uint8_t *m = msg;
    uint64_t k0 = load_le64(key), k1 = load_le64(key + 8);
    uint64_t v0 = k0 ^ 0x736f6d6570736575ULL, v1 = k1 ^ 0x646f72616e646f6dULL;
    uint64_t v2 = k0 ^ 0x6c7967656e657261ULL, v3 = k1 ^ 0x7465646279746573ULL;
    size_t full = len & ~(size_t)7;
    for (size_t i = 0; i < full; i += 8) {
        uint64_t w = load_le64(m + i);
        v3 ^= w;
        SIPROUND;
        SIPROUND;
        v0 ^= w;
    }
    /* the last block: the remaining bytes, and len mod 256 in the top byte */
    uint64_t b = (uint64_t)(len & 0xff) << 56;
    for (size_t i = full; i < len; i++)
        b |= (uint64_t)m[i] << (8 * (i - full));
    v3 ^= b;
    SIPROUND;
    SIPROUND;
    v0 ^= b;
    v2 ^= 0xff;
    SIPROUND;
    SIPROUND;
    SIPROUND;
    SIPROUND;
    return v0 ^ v1 ^ v2 ^ v3;
}
