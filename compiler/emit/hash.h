/*
** hash.h — a deterministic fingerprint of the model text.
**
** FNV-1a, 64 bits (Fowler, Noll, Vo; the published offset basis and prime),
** written as 16 lowercase hex digits.  It identifies which model text a
** generated file came from; it is not a cryptographic hash.
*/
#ifndef EOMC_HASH_H
#define EOMC_HASH_H

#include <stddef.h>
#include <stdint.h>

#define HASH_HEX_LEN 16

uint64_t hash_fnv1a64(const void *data, size_t len);

/* Write the hash of data as HASH_HEX_LEN hex digits and a NUL into hex. */
void hash_hex(const void *data, size_t len, char hex[HASH_HEX_LEN + 1]);

#endif
