/*
** fuzz_symbolic.c — libFuzzer harness over the symbolic stage: inputs that
** parse and check cleanly are derived (Euler–Lagrange, Jacobians, CSE into
** the IR) with a short time limit, then freed.
**
** The derivation must either succeed or report an error through the Diag
** (non-polynomial rates, time limit, ...); a crash, a sanitizer report or a
** leak is a bug.  Most mutated inputs stop in the front end, so the seed
** corpus (examples/ and tests/bad/) matters here: see README.md.
*/
#include <assert.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "front/check.h"
#include "front/diag.h"
#include "front/parse.h"
#include "sym/symbolic.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
  char *src = malloc(size + 1);
  if (!src) return 0;
  if (size) memcpy(src, data, size);
  src[size] = '\0';

  Diag d;
  diag_init(&d, "fuzz.eom", src, size);
  Ast *ast = parse_model("fuzz.eom", src, size, &d);
  assert(ast != NULL);
  Model m;
  memset(&m, 0, sizeof m);
  if (d.nerrors == 0 && check_model(ast, &d, &m) == 0) {
    /* A short limit: slow derivations are the benchmarks' business, and the
    ** limit's own stop path gets exercised too. */
    SymOptions opt = {0, 0.5};
    EomSystem s;
    memset(&s, 0, sizeof s);
    int rc = sym_derive(&m, &opt, &d, &s);
    /* Failure must come with a diagnostic, never silently. */
    assert(rc == 0 || d.nerrors > 0);
    sym_free(&s);
  }
  diag_free(&d);
  ast_free(ast);
  free(src);
  return 0;
}
