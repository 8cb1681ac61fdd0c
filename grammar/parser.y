/*
** parser.y — the Bison grammar of the model language.
**
** A pure (reentrant) LALR parser with locations.  It builds the AST of
** ast.h in the model's arena; every statement that parses becomes one Stmt,
** in source order.  The lexer (grammar/lexer.re, compiler/front/lexer.h) has
** already decided which newlines end statements and which `[` index, so the
** grammar below is context free and conflict free (%expect 0).
**
** Errors.  Syntax errors are reported with %define parse.error custom in
** the user's words ("expected an expression after '+'", "unexpected ')'"),
** never with Bison's token names.  Recovery is at statement boundaries:
** `file: file error sep` skips the rest of a bad statement silently, so
** each bad statement gives one error and the next statements are still
** checked.  Depth: an expression tree deeper than AST_MAX_DEPTH is an error
** (the later recursive passes rely on the bound); a parser stack overflow,
** which only input far deeper than that can cause, is reported the same way
** and stops the parse.
*/

%code requires {
#include "front/ast.h"
typedef struct ParseCtx ParseCtx;
typedef struct PtrVec PtrVec;
}

%code provides {
int yylex(YYSTYPE *lval, YYLTYPE *lloc, ParseCtx *ctx);
void yyerror(YYLTYPE *lloc, ParseCtx *ctx, const char *msg);
}

%code {
#include <assert.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "front/lexer.h"
#include "front/parse.h"

/* A growable array of pointers in the arena (the old array is abandoned
** on growth: at most twice the final size is ever used). */
struct PtrVec {
  void **v;
  int n, cap;
};

struct ParseCtx {
  Lexer lx;
  Arena *arena;
  Diag *diag;
  PtrVec *stmts;
};

static PtrVec *vec_new(Arena *a) {
  return arena_alloc(a, sizeof(PtrVec));
}

static PtrVec *vec_push(Arena *a, PtrVec *vec, void *p) {
  if (vec->n == vec->cap) {
    int cap = vec->cap ? 2 * vec->cap : 4;
    void **nv = arena_alloc(a, (size_t)cap * sizeof *nv);
    if (vec->n) memcpy(nv, vec->v, (size_t)vec->n * sizeof *nv);
    vec->v = nv;
    vec->cap = cap;
  }
  vec->v[vec->n++] = p;
  return vec;
}

static SrcLoc loc_of(YYLTYPE l) {
  SrcLoc s = {l.first_line, l.first_column};
  return s;
}

/* Parser stack bound.  A legitimate expression (depth <= AST_MAX_DEPTH,
** brackets <= AST_MAX_NESTING) needs at most about 2 entries per level of
** a right-associative chain plus 4 per open bracket, far below this; input
** that exhausts it is reported as nested too deeply (see yyerror). */
#define YYMAXDEPTH 10000

#define LOC(l) loc_of(l)
#define A (ctx->arena)

/* Stop building a tree that later passes could not walk. */
#define CHECK_DEPTH(e, l)                                                   \
  do {                                                                      \
    if ((e)->depth > AST_MAX_DEPTH) {                                       \
      diag_error(ctx->diag, LOC(l),                                         \
                 "expression nested too deeply (more than %d levels)",     \
                 AST_MAX_DEPTH);                                            \
      ctx->lx.recovering = 1;                                               \
      YYERROR;                                                              \
    }                                                                       \
  } while (0)

/* Statements that violate a rule checked in an action are reported and
** left out of the AST. */
static Stmt *bad_stmt(ParseCtx *ctx, YYLTYPE l, const char *msg, const char *arg) {
  diag_error(ctx->diag, LOC(l), msg, arg);
  return NULL;
}

static Stmt *decl_stmt(ParseCtx *ctx, StmtKind sk, DeclKind dk, YYLTYPE kw,
                       const char *name, YYLTYPE name_loc, Expr *value,
                       Expr *unit, const char *desc) {
  Stmt *s = ast_stmt(A, sk, LOC(kw));
  Decl *d = ast_decl(A, dk, LOC(name_loc), name);
  d->value = value;
  d->unit = unit;
  d->desc = desc;
  s->decls = arena_alloc(A, sizeof *s->decls);
  s->decls[0] = d;
  s->ndecls = 1;
  return s;
}

/* coord/input: one Decl per listed name, sharing the unit and the text. */
static Stmt *list_stmt(ParseCtx *ctx, StmtKind sk, DeclKind dk, YYLTYPE kw,
                       PtrVec *names, Expr *unit, const char *desc) {
  Stmt *s = ast_stmt(A, sk, LOC(kw));
  s->decls = (Decl **)arena_copy_ptrs(A, names->v, (size_t)names->n);
  s->ndecls = names->n;
  for (int i = 0; i < s->ndecls; i++) {
    s->decls[i]->kind = dk;
    s->decls[i]->unit = unit;
    s->decls[i]->desc = desc;
  }
  return s;
}

static Stmt *expr_stmt(ParseCtx *ctx, StmtKind sk, YYLTYPE kw, Expr *e0, Expr *e1) {
  Stmt *s = ast_stmt(A, sk, LOC(kw));
  s->e[0] = e0;
  s->e[1] = e1;
  return s;
}
}

%define api.pure full
%locations
%param {ParseCtx *ctx}
%define parse.error custom
%define parse.lac full
%expect 0

%union {
  double num;
  const char *str;
  int ival;
  Expr *expr;
  PtrVec *vec;
  Stmt *stmt;
}

%token <str> T_NAME
%token <num> T_NUMBER
%token <str> T_STRING
%token T_NEWLINE
%token T_BAD          /* a lexical error, already reported by the lexer */
%token T_IDX_LBRACK   /* `[` directly after a name, `)`, `]` or `'` */
%token KW_MODEL KW_COORD KW_PARAM KW_CONST KW_INPUT KW_LET KW_INITIAL KW_OUTPUT
%token KW_IDENTIFY KW_KINETIC KW_POTENTIAL KW_LAGRANGIAN KW_DISSIPATION
%token KW_FORCE KW_TORQUE KW_GRAVITY KW_BODY KW_CONSTRAINT KW_FRAME KW_ATTITUDE
%token KW_STOP
%token T_GE          /* `>=` (only in `stop`) */
/* Contextual words: ordinary names except where `body`, `force`,
** `torque` and `stop` expect them. */
%token <str> CW_MASS CW_AT CW_ON CW_ORIENT CW_INERTIA CW_BOUNCE

%type <str> name desc_opt
%type <expr> bounce_opt expr postfix primary unit_opt name_unit_opt
%type <vec> namelist exprlist args_opt
%type <stmt> stmt body_parts
%type <ival> body_word

%left '+' '-'
%left '*' '/'
%precedence UMINUS
%right '^'

%%

file:
    %empty
  | file sep
  | file stmt sep      { if ($2) vec_push(A, ctx->stmts, $2); }
  | file error sep     { yyerrok; ctx->lx.recovering = 0; ctx->lx.depth = 0; }
  ;

sep: T_NEWLINE | ';' ;

name:
    T_NAME | CW_MASS | CW_AT | CW_ON | CW_ORIENT | CW_INERTIA | CW_BOUNCE ;

stmt:
    KW_MODEL name {
      $$ = ast_stmt(A, ST_MODEL, LOC(@1));
      $$->name = $2;
      $$->name_loc = LOC(@2);
    }
  | KW_COORD namelist name_unit_opt desc_opt {
      $$ = list_stmt(ctx, ST_COORD, DECL_COORD, @1, $2, $3, $4);
    }
  | KW_ATTITUDE namelist name_unit_opt desc_opt {
      if ($3)
        $$ = bad_stmt(ctx, @3, "an attitude takes no unit: it is a rotation, and omega(%s) is in rad/s",
                      ((Decl *)$2->v[0])->name);
      else
        $$ = list_stmt(ctx, ST_ATTITUDE, DECL_ATTITUDE, @1, $2, NULL, $4);
    }
  | KW_INPUT namelist name_unit_opt desc_opt {
      $$ = list_stmt(ctx, ST_INPUT, DECL_INPUT, @1, $2, $3, $4);
    }
  | KW_PARAM name '=' expr unit_opt desc_opt {
      $$ = decl_stmt(ctx, ST_PARAM, DECL_PARAM, @1, $2, @2, $4, $5, $6);
    }
  | KW_CONST name '=' expr unit_opt desc_opt {
      $$ = decl_stmt(ctx, ST_CONST, DECL_CONST, @1, $2, @2, $4, $5, $6);
    }
  | KW_LET name '=' expr {
      $$ = decl_stmt(ctx, ST_LET, DECL_LET, @1, $2, @2, $4, NULL, NULL);
    }
  | KW_LET name '=' expr '[' expr ']' {
      /* Parsed only to say why it is wrong. */
      (void)$6;
      $$ = bad_stmt(ctx, @5, "'let %s' takes no unit: units go on coord, param, const, "
                    "input and output", $2);
    }
  | KW_OUTPUT name '=' expr unit_opt desc_opt {
      $$ = decl_stmt(ctx, ST_OUTPUT, DECL_OUTPUT, @1, $2, @2, $4, $5, $6);
    }
  | KW_FRAME name '=' expr desc_opt {
      $$ = decl_stmt(ctx, ST_FRAME, DECL_OUTPUT, @1, $2, @2, $4, NULL, $5);
      $$->decls[0]->frame = 1;
    }
  | KW_INITIAL name '=' expr {
      $$ = expr_stmt(ctx, ST_INITIAL, @1, $4, NULL);
      $$->name = $2;
      $$->name_loc = LOC(@2);
    }
  | KW_INITIAL name '\'' '=' expr {
      $$ = expr_stmt(ctx, ST_INITIAL, @1, $5, NULL);
      $$->name = $2;
      $$->name_loc = LOC(@2);
      $$->rate = 1;
    }
  | KW_INITIAL name '(' name ')' '=' expr {
      if (strcmp($2, "omega") != 0) {
        $$ = bad_stmt(ctx, @2, "'initial %s(...)': only omega(ATTITUDE) can be given an initial "
                      "value this way", $2);
      } else {
        $$ = expr_stmt(ctx, ST_INITIAL, @1, $7, NULL);
        $$->name = $4;
        $$->name_loc = LOC(@4);
        $$->omega = 1;
      }
    }
  | KW_IDENTIFY namelist {
      $$ = ast_stmt(A, ST_IDENTIFY, LOC(@1));
      $$->nnames = $2->n;
      $$->names = arena_alloc(A, (size_t)$2->n * sizeof *$$->names);
      $$->name_locs = arena_alloc(A, (size_t)$2->n * sizeof *$$->name_locs);
      for (int i = 0; i < $2->n; i++) {
        Decl *d = $2->v[i];
        $$->names[i] = d->name;
        $$->name_locs[i] = d->loc;
      }
    }
  | KW_KINETIC expr      { $$ = expr_stmt(ctx, ST_KINETIC, @1, $2, NULL); }
  | KW_POTENTIAL expr    { $$ = expr_stmt(ctx, ST_POTENTIAL, @1, $2, NULL); }
  | KW_LAGRANGIAN expr   { $$ = expr_stmt(ctx, ST_LAGRANGIAN, @1, $2, NULL); }
  | KW_DISSIPATION expr  { $$ = expr_stmt(ctx, ST_DISSIPATION, @1, $2, NULL); }
  | KW_FORCE name '=' expr {
      $$ = expr_stmt(ctx, ST_FORCE, @1, $4, NULL);
      $$->name = $2;
      $$->name_loc = LOC(@2);
    }
  | KW_FORCE expr CW_AT expr       { $$ = expr_stmt(ctx, ST_FORCE_AT, @1, $2, $4); }
  | KW_TORQUE expr CW_ON expr      { $$ = expr_stmt(ctx, ST_TORQUE, @1, $2, $4); }
  | KW_GRAVITY expr                { $$ = expr_stmt(ctx, ST_GRAVITY, @1, $2, NULL); }
  | KW_CONSTRAINT expr '=' expr unit_opt {
      $$ = expr_stmt(ctx, ST_CONSTRAINT, @1, $2, $4);
      if ($$) $$->e[2] = $5;
    }
  | KW_STOP expr T_GE expr bounce_opt desc_opt {
      $$ = expr_stmt(ctx, ST_STOP, @1, $2, $4);
      $$->e[2] = $5;
      $$->desc = $6;
    }
  | KW_BODY name body_parts {
      $$ = $3;
      if ($$) {
        $$->loc = LOC(@1);
        Decl *d = ast_decl(A, DECL_BODY, LOC(@2), $2);
        $$->decls = arena_alloc(A, sizeof *$$->decls);
        $$->decls[0] = d;
        $$->ndecls = 1;
        if (!$$->e[0])
          $$ = bad_stmt(ctx, @1, "body '%s' needs a mass: body NAME mass EXPR at EXPR", $2);
        else if (!$$->e[1])
          $$ = bad_stmt(ctx, @1, "body '%s' needs a position: body NAME mass EXPR at EXPR", $2);
      }
    }
  ;

/* `body` parts in any order, each at most once.  NULL after an error. */
body_parts:
    %empty { $$ = ast_stmt(A, ST_BODY, LOC(@$)); }
  | body_parts body_word expr {
      static const char *const words[] = {"mass", "at", "orient", "inertia"};
      $$ = $1;
      if ($$ && $$->e[$2]) {
        diag_error(ctx->diag, LOC(@2), "'%s' is given twice in this body", words[$2]);
        $$ = NULL;
      } else if ($$) {
        $$->e[$2] = $3;
      }
    }
  ;

body_word:
    CW_MASS     { $$ = 0; }
  | CW_AT       { $$ = 1; }
  | CW_ORIENT   { $$ = 2; }
  | CW_INERTIA  { $$ = 3; }
  ;

namelist:
    name               { $$ = vec_push(A, vec_new(A), ast_decl(A, DECL_COORD, LOC(@1), $1)); }
  | namelist ',' name  { $$ = vec_push(A, $1, ast_decl(A, DECL_COORD, LOC(@3), $3)); }
  ;

/* Unit annotations are expressions of unit symbols; the units module reads
** them.  After a list of names a `[` touching the last name is also a unit
** (`coord x[m]`): a name there cannot be indexed. */
unit_opt:
    %empty            { $$ = NULL; }
  | '[' expr ']'      { $$ = $2; }
  ;

name_unit_opt:
    %empty                  { $$ = NULL; }
  | '[' expr ']'            { $$ = $2; }
  | T_IDX_LBRACK expr ']'   { $$ = $2; }
  ;

bounce_opt:
    %empty              { $$ = NULL; }
  | CW_BOUNCE expr      { $$ = $2; }
  ;

desc_opt:
    %empty     { $$ = NULL; }
  | T_STRING
  ;

expr:
    expr '+' expr  { $$ = ast_binary(A, LOC(@2), OP_ADD, $1, $3); CHECK_DEPTH($$, @2); }
  | expr '-' expr  { $$ = ast_binary(A, LOC(@2), OP_SUB, $1, $3); CHECK_DEPTH($$, @2); }
  | expr '*' expr  { $$ = ast_binary(A, LOC(@2), OP_MUL, $1, $3); CHECK_DEPTH($$, @2); }
  | expr '/' expr  { $$ = ast_binary(A, LOC(@2), OP_DIV, $1, $3); CHECK_DEPTH($$, @2); }
  | expr '^' expr  { $$ = ast_binary(A, LOC(@2), OP_POW, $1, $3); CHECK_DEPTH($$, @2); }
  | '-' expr %prec UMINUS  { $$ = ast_unary(A, LOC(@1), OP_NEG, $2); CHECK_DEPTH($$, @1); }
  | '+' expr %prec UMINUS  { $$ = $2; }
  | postfix
  ;

postfix:
    primary
  | postfix '\''  { $$ = ast_rate(A, LOC(@2), $1); CHECK_DEPTH($$, @2); }
  | postfix T_IDX_LBRACK exprlist ']' {
      if ($3->n > 2) {
        diag_error(ctx->diag, LOC(@2), "an index takes one or two subscripts, not %d", $3->n);
        ctx->lx.recovering = 1;
        YYERROR;
      }
      $$ = ast_index(A, LOC(@2), $1, (Expr **)$3->v, $3->n);
      CHECK_DEPTH($$, @2);
    }
  ;

primary:
    T_NUMBER               { $$ = ast_num(A, LOC(@1), $1); }
  | name                   { $$ = ast_name(A, LOC(@1), $1); }
  | name '(' args_opt ')'  {
      $$ = ast_call(A, LOC(@1), $1, (Expr **)$3->v, $3->n);
      CHECK_DEPTH($$, @1);
    }
  | '(' expr ')'           { $$ = $2; }
  | '[' exprlist ']'       {
      $$ = ast_list(A, LOC(@1), (Expr **)$2->v, $2->n);
      CHECK_DEPTH($$, @1);
    }
  ;

exprlist:
    expr               { $$ = vec_push(A, vec_new(A), $1); }
  | exprlist ',' expr  { $$ = vec_push(A, $1, $3); }
  ;

args_opt:
    %empty    { $$ = vec_new(A); }
  | exprlist
  ;

%%

/* ------------------------------------------------------------ messages */

/* The character of a one-character token ('+', ';', '\''...), else 0. */
static int sym_char(yysymbol_kind_t k) {
  const char *name = yysymbol_name(k);
  if (name[0] != '\'') return 0;
  return name[1] == '\\' ? name[2] : name[1];
}

/* How a token kind reads in a message; `found` adds the token's own text. */
static void describe(yysymbol_kind_t k, const Token *tok, char *buf, size_t n) {
  const char *s = NULL;
  switch (k) {
    case YYSYMBOL_YYEOF: s = "end of file"; break;
    case YYSYMBOL_T_NEWLINE:
      s = tok && tok->at_eof ? "end of file" : "end of line";
      break;
    case YYSYMBOL_T_NAME:
    case YYSYMBOL_T_NUMBER:
      if (tok && tok->start) {
        int len = tok->len > 32 ? 32 : (int)tok->len;
        snprintf(buf, n, "%s '%.*s%s'", k == YYSYMBOL_T_NAME ? "name" : "number",
                 len, (const char *)tok->start, tok->len > 32 ? "..." : "");
        return;
      }
      s = k == YYSYMBOL_T_NAME ? "a name" : "a number";
      break;
    case YYSYMBOL_T_STRING: s = "a description string"; break;
    case YYSYMBOL_T_IDX_LBRACK: s = "'['"; break;
    case YYSYMBOL_T_BAD: s = "an invalid token"; break;
    default: break;
  }
  if (s) {
    snprintf(buf, n, "%s", s);
    return;
  }
  /* Punctuation and words: quote their spelling. */
  if (sym_char(k)) {
    snprintf(buf, n, sym_char(k) == '\'' ? "\"%c\"" : "'%c'", sym_char(k));
    return;
  }
  static const struct { yysymbol_kind_t k; const char *w; } words[] = {
    {YYSYMBOL_KW_MODEL, "model"}, {YYSYMBOL_KW_COORD, "coord"}, {YYSYMBOL_KW_PARAM, "param"},
    {YYSYMBOL_KW_CONST, "const"}, {YYSYMBOL_KW_INPUT, "input"}, {YYSYMBOL_KW_LET, "let"},
    {YYSYMBOL_KW_INITIAL, "initial"}, {YYSYMBOL_KW_OUTPUT, "output"},
    {YYSYMBOL_KW_IDENTIFY, "identify"}, {YYSYMBOL_KW_KINETIC, "kinetic"},
    {YYSYMBOL_KW_POTENTIAL, "potential"}, {YYSYMBOL_KW_LAGRANGIAN, "lagrangian"},
    {YYSYMBOL_KW_DISSIPATION, "dissipation"}, {YYSYMBOL_KW_FORCE, "force"},
    {YYSYMBOL_KW_TORQUE, "torque"}, {YYSYMBOL_KW_GRAVITY, "gravity"},
    {YYSYMBOL_KW_BODY, "body"}, {YYSYMBOL_KW_CONSTRAINT, "constraint"},
    {YYSYMBOL_KW_FRAME, "frame"}, {YYSYMBOL_KW_ATTITUDE, "attitude"},
    {YYSYMBOL_KW_STOP, "stop"}, {YYSYMBOL_T_GE, ">="}, {YYSYMBOL_CW_BOUNCE, "bounce"},
    {YYSYMBOL_CW_MASS, "mass"}, {YYSYMBOL_CW_AT, "at"}, {YYSYMBOL_CW_ON, "on"},
    {YYSYMBOL_CW_ORIENT, "orient"}, {YYSYMBOL_CW_INERTIA, "inertia"},
  };
  for (size_t i = 0; i < sizeof words / sizeof words[0]; i++)
    if (words[i].k == k) {
      snprintf(buf, n, "'%s'", words[i].w);
      return;
    }
  snprintf(buf, n, "a token");
}

static int is_keyword(yysymbol_kind_t k) {
  return (k >= YYSYMBOL_KW_MODEL && k <= YYSYMBOL_KW_CONSTRAINT) || k == YYSYMBOL_KW_STOP;
}

static int is_contextual(yysymbol_kind_t k) {
  return k >= YYSYMBOL_CW_MASS && k <= YYSYMBOL_CW_BOUNCE;
}

/* " after 'x'" naming the token before the offending one, when it belongs
** to the same statement. */
static void after_text(const Token *prev, char *buf, size_t n) {
  buf[0] = '\0';
  if (prev->kind == T_NEWLINE || prev->kind == ';' || prev->kind == YYEOF || !prev->start)
    return;
  char text[40];
  size_t len = prev->len > 24 ? 24 : prev->len, j = 0;
  for (size_t i = 0; i < len; i++) {
    unsigned char c = prev->start[i];
    text[j++] = c >= 0x20 && c < 0x7f ? (char)c : '?';
  }
  text[j] = '\0';
  const char *q = strchr(text, '\'') ? "\"" : "'";
  snprintf(buf, n, " after %s%s%s%s", q, text, prev->len > 24 ? "..." : "", q);
}

static int yyreport_syntax_error(const yypcontext_t *yyctx, ParseCtx *ctx) {
  Lexer *lx = &ctx->lx;
  yysymbol_kind_t found = yypcontext_token(yyctx);
  SrcLoc where = LOC(*yypcontext_location(yyctx));
  int was_recovering = lx->recovering;
  lx->recovering = 1;   /* the rest of this statement is skipped silently */
  if (found == YYSYMBOL_T_BAD || was_recovering) return 0;

  yysymbol_kind_t exp[YYNTOKENS];
  int nexp = yypcontext_expected_tokens(yyctx, exp, YYNTOKENS);
  if (nexp < 0) nexp = 0;
  int want_expr = 0, want_name = 0, want_end = 0, stmt_start = 0, had_ops = 0;
  for (int i = 0; i < nexp; i++) {
    int c = sym_char(exp[i]);
    if (exp[i] == YYSYMBOL_T_NUMBER) want_expr = 1;
    if (exp[i] == YYSYMBOL_T_NAME) want_name = 1;
    if (exp[i] == YYSYMBOL_T_NEWLINE) want_end = 1;
    if (exp[i] == YYSYMBOL_KW_KINETIC) stmt_start = 1;
    if (c == '*' || c == '/' || c == '^') had_ops = 1;   /* after a complete operand */
  }
  char f[64], after[64];
  describe(found, &lx->last, f, sizeof f);
  after_text(&lx->before_last, after, sizeof after);
  int found_end = found == YYSYMBOL_T_NEWLINE || found == YYSYMBOL_YYEOF;

  if (stmt_start) {
    diag_error(ctx->diag, where,
               "unexpected %s at the start of a statement "
               "(a statement begins with a keyword such as 'param', 'let' or 'kinetic')", f);
  } else if (want_name && is_keyword(found)) {
    diag_error(ctx->diag, where, "%s is a reserved word and cannot be used as a name", f);
  } else if (want_expr && !want_end && !had_ops) {
    if (sym_char(found) == '*' && lx->before_last.kind == '*' &&
        lx->before_last.start + 1 == lx->last.start)
      diag_error(ctx->diag, where, "unexpected '**': a power is written with '^', as in x^2");
    else if (found_end)
      diag_error(ctx->diag, where, "expected an expression%s", after);
    else
      diag_error(ctx->diag, where, "expected an expression%s, found %s", after, f);
  } else {
    /* Name the offending token and list, in words, what may come instead
    ** ("an expression", "end of line", "','"), with hints for common slips. */
    char items[8][32];
    int nitems = 0, too_many = 0, want_unit = 0;
    if (want_expr) snprintf(items[nitems++], 32, "an expression");
    for (int i = 0; i < nexp; i++) {
      yysymbol_kind_t k = exp[i];
      int c = sym_char(k);
      if (c == '[' && !want_expr) {                   /* a unit may come here */
        want_unit = 1;
        if (nitems < 6 && !had_ops) snprintf(items[nitems++], 32, "a unit '[...]'");
        continue;
      }
      if (c && strchr("+-*/^('[", c)) continue;   /* operators, expression starts */
      if (k == YYSYMBOL_T_IDX_LBRACK || k == YYSYMBOL_T_NUMBER || c == ';') continue;
      if (want_expr && k == YYSYMBOL_T_NAME) continue;
      if (want_name && is_contextual(k)) continue;  /* those are names as well */
      if (nitems >= 6) {
        too_many = 1;
        break;
      }
      if (k == YYSYMBOL_T_NEWLINE) snprintf(items[nitems++], 32, "end of line");
      else describe(k, NULL, items[nitems++], 32);
    }
    /* After a complete operand an operator could always come next: say so
    ** first. */
    int after_operand = had_ops && !found_end;
    if (after_operand && nitems > 0 && !too_many) {
      memmove(items[1], items[0], (size_t)nitems * sizeof items[0]);
      snprintf(items[0], 32, "an operator");
      nitems++;
    }
    char list[300] = "";
    size_t used = 0;
    for (int i = 0; i < nitems && used < sizeof list; i++) {
      int w = snprintf(list + used, sizeof list - used, "%s%s",
                       i == 0 ? "" : i == nitems - 1 ? " or " : ", ", items[i]);
      if (w > 0) used += (size_t)w;
    }
    const Token *prev = &lx->before_last, *cur = &lx->last;
    if (after_operand && found == YYSYMBOL_T_NAME && prev->kind == T_NUMBER &&
        prev->start + prev->len == cur->start && prev->len + cur->len < 40) {
      /* `2x`: a number touching a name. */
      diag_error(ctx->diag, where, "unexpected %s%s (a product needs '*': %.*s*%.*s)", f, after,
                 (int)prev->len, (const char *)prev->start, (int)cur->len, (const char *)cur->start);
    } else if (after_operand && want_unit && found == YYSYMBOL_T_NAME && cur->len < 40) {
      /* `param m = 2 kg` */
      diag_error(ctx->diag, where, "unexpected %s%s (a unit goes in brackets: [%.*s])", f, after,
                 (int)cur->len, (const char *)cur->start);
    } else if (after_operand && nitems > 0 && !too_many) {
      diag_error(ctx->diag, where, "unexpected %s%s (expected %s)", f, after, list);
    } else if (after_operand || nitems == 0 || too_many) {
      diag_error(ctx->diag, where, "unexpected %s%s", f, after);
    } else if (found_end) {
      diag_error(ctx->diag, where, "expected %s%s", list, after);
    } else {
      diag_error(ctx->diag, where, "expected %s%s, found %s", list, after, f);
    }
  }
  return 0;
}

/* Bison calls this only when its stack is exhausted, which takes an
** expression nested far beyond AST_MAX_DEPTH. */
void yyerror(YYLTYPE *lloc, ParseCtx *ctx, const char *msg) {
  (void)msg;
  diag_error(ctx->diag, LOC(*lloc), "expression nested too deeply (more than %d levels)",
             AST_MAX_DEPTH);
}

int yylex(YYSTYPE *lval, YYLTYPE *lloc, ParseCtx *ctx) {
  return lexer_next(&ctx->lx, lval, lloc);
}

/* ------------------------------------------------------------ entry point */

Ast *parse_model(const char *path, const char *src, size_t len, Diag *d) {
  Arena *a = arena_new();
  Ast *ast = arena_alloc(a, sizeof *ast);
  ast->arena = a;
  ast->path = arena_strdup(a, path ? path : "-");
  /* The lexer needs a NUL after the last byte; the caller's buffer may not
  ** have one, so work on a copy. */
  char *text = malloc(len + 1);
  if (!text) {
    fputs("eomc: out of memory\n", stderr);
    abort();
  }
  if (len) memcpy(text, src, len);
  text[len] = '\0';
  ParseCtx *ctx = malloc(sizeof *ctx);
  if (!ctx) abort();
  memset(ctx, 0, sizeof *ctx);
  lexer_init(&ctx->lx, text, len, a, d);
  ctx->arena = a;
  ctx->diag = d;
  ctx->stmts = vec_new(a);
  yyparse(ctx);
  ast->stmts = (Stmt **)arena_copy_ptrs(a, ctx->stmts->v, (size_t)ctx->stmts->n);
  ast->nstmts = ctx->stmts->n;
  free(ctx);
  free(text);
  return ast;
}
