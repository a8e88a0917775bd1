/* test_id_hash.c — SipHash-2-4 (collector/id_hash.c) against published and
 * independently computed values. The expected outputs are the hash's 8 bytes
 * in the order the paper defines (little-endian), as hex. Sources:
 *  - the SipHash paper (Aumasson & Bernstein 2012), appendix A: key
 *    00..0f, message 00..0e (15 bytes) -> a129ca6149be45e5;
 *  - Debian's OpenSSL 3 (openssl mac -macopt hexkey:KEY -macopt size:8
 *    -in FILE SIPHASH), run on 2026-12-02 for every other row. */
#include <stdio.h>
#include <string.h>

#include "check.h"
#include "id_hash.h"

static void hex_le(uint64_t v, char out[17])
{
    for (int i = 0; i < 8; i++)
        snprintf(out + 2 * i, 3, "%02X", (unsigned)((v >> (8 * i)) & 0xff));
}

static void key_of(const char *hex, uint8_t key[16])
{
    for (int i = 0; i < 16; i++) {
        unsigned b;
        sscanf(hex + 2 * i, "%2x", &b);
        key[i] = (uint8_t)b;
    }
}

int main(void)
{
    static const struct {
        int n; /* message: bytes 00, 01, ..., n-1 */
        const char *want, *source;
    } counting[] = {
        {15, "E545BE4961CA29A1", "paper, appendix A (0xa129ca6149be45e5)"},
        {0, "310E0EDD47DB6F72", "openssl mac SIPHASH"},
        {1, "FD67DC93C539F874", "openssl mac SIPHASH"},
        {7, "37D1018BF50002AB", "openssl mac SIPHASH"},
        {8, "6224939A79F5F593", "openssl mac SIPHASH"},
        {9, "B0E4A90BDF82009E", "openssl mac SIPHASH"},
        {16, "DB9BC2577FCC2A3F", "openssl mac SIPHASH"},
        {17, "9447BE2CF5E99A69", "openssl mac SIPHASH"},
        {63, "724506EB4C328A95", "openssl mac SIPHASH"},
        {64, "D8CA02850BC4D2AC", "openssl mac SIPHASH"},
    };
    uint8_t key[16], msg[64];
    char got[17];
    key_of("000102030405060708090a0b0c0d0e0f", key);
    for (int i = 0; i < 64; i++)
        msg[i] = (uint8_t)i;
    for (size_t i = 0; i < sizeof counting / sizeof counting[0]; i++) {
        hex_le(cc_siphash24(key, msg, (size_t)counting[i].n), got);
        if (strcmp(got, counting[i].want))
            fprintf(stderr, "%d bytes (%s): got %s, want %s\n", counting[i].n, counting[i].source,
                    got, counting[i].want);
        CHECK(strcmp(got, counting[i].want) == 0);
    }
    /* ids as the store hashes them, under another key (openssl mac SIPHASH) */
    static const struct {
        const char *id, *want;
    } ids[] = {
        {"5750dde4-e13e-0a0d-4a1b-2c3d4e5f6a7b", "D374AAAA498032C4"},
        {"e0000001", "0757363E234FE5D5"},
    };
    key_of("00112233445566778899aabbccddeeff", key);
    for (size_t i = 0; i < sizeof ids / sizeof ids[0]; i++) {
        hex_le(cc_siphash24(key, ids[i].id, strlen(ids[i].id)), got);
        if (strcmp(got, ids[i].want))
            fprintf(stderr, "%s: got %s, want %s\n", ids[i].id, got, ids[i].want);
        CHECK(strcmp(got, ids[i].want) == 0);
    }
    return CHECK_DONE("id_hash");
}
