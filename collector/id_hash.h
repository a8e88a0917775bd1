/* id_hash.h — the 64-bit hash of an event id kept in the store's id index
 * (schema 5: events.id_hash, index events_by_hash). */
#ifndef CC_COLLECTOR_ID_HASH_H
#define CC_COLLECTOR_ID_HASH_H

#include <stddef.h>
#include <stdint.h>

/* SipHash-2-4 (Aumasson & Bernstein, "SipHash: a fast short-input PRF",
 * INDOCRYPT 2012) of the len bytes at msg under the 16-byte key, the key and
 * the result read and written little-endian as in the paper. Pure. */
uint64_t cc_siphash24(const uint8_t key[16], const void *msg, size_t len);

#endif
