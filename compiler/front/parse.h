/*
** parse.h — the front end's entry point: bytes in, AST out.
**
** parse_model() runs the re2c lexer (grammar/lexer.re) and the pure Bison
** parser (grammar/parser.y) over one model file.  Syntax errors are reported
** to `d`; the parser recovers at statement boundaries, so one run reports
** several.  The returned Ast (never NULL) holds every statement that parsed.
*/
#ifndef EOMC_PARSE_H
#define EOMC_PARSE_H

#include <stddef.h>
#include "front/ast.h"
#include "front/diag.h"

Ast *parse_model(const char *path, const char *src, size_t len, Diag *d);
void ast_free(Ast *ast);

#endif
