/*
** hash.c — FNV-1a 64-bit hash of the model text, as hex.
*/
#include "emit/hash.h"

#include <assert.h>

uint64_t hash_fnv1a64(const void *data, size_t len) {
  const unsigned char *p = data;
  uint64_t h = UINT64_C(0xcbf29ce484222325);   /* FNV-1a offset basis */
  assert(data != NULL || len == 0);
  for (size_t i = 0; i < len; i++) {
    h ^= p[i];
    h *= UINT64_C(0x100000001b3);              /* FNV prime */
  }
  return h;
}

void hash_hex(const void *data, size_t len, char hex[HASH_HEX_LEN + 1]) {
  static const char digits[] = "0123456789abcdef";
  uint64_t h = hash_fnv1a64(data, len);
  for (int i = HASH_HEX_LEN - 1; i >= 0; i--) {
    hex[i] = digits[h & 0xf];
    h >>= 4;
  }
  hex[HASH_HEX_LEN] = '\0';
}
