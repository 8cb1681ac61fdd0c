/*
** fuzz_frontend.c — libFuzzer harness over the whole front end: the input
** bytes are a model file; lex, parse and check it, then free everything.
**
** Any crash, sanitizer report, leak or hang here is a bug: the front end must
** answer every input with diagnostics.  Built and run by tests/fuzz/run.sh.
*/
#include <assert.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "front/check.h"
#include "front/diag.h"
#include "front/parse.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
  /* source_read() hands the stages a NUL-terminated copy: do the same. */
  char *src = malloc(size + 1);
  if (!src) return 0;
  if (size) memcpy(src, data, size);
  src[size] = '\0';

  Diag d;
  diag_init(&d, "fuzz.eom", src, size);
  Ast *ast = parse_model("fuzz.eom", src, size, &d);
  assert(ast != NULL);
  if (d.nerrors == 0) {
    Model m;
    memset(&m, 0, sizeof m);
    check_model(ast, &d, &m);
  }
  /* Printing exercises the caret and source-line code on every message. */
  FILE *sink = fopen("/dev/null", "w");
  if (sink) {
    diag_print(&d, sink);
    fclose(sink);
  }
  diag_free(&d);
  ast_free(ast);
  free(src);
  return 0;
}
