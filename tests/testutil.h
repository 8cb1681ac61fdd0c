/*
** testutil.h — helpers for end-to-end tests: run a program, capture its
** output, make temporary files and directories, read the CSV tables that
** `eomc sim` writes.
*/
#ifndef EOMC_TESTUTIL_H
#define EOMC_TESTUTIL_H

#include <check.h>
#include <stddef.h>

/* Exit status of a test program that lacks a tool: automake's SKIP. */
#define TEST_SKIPPED 77

/* The eomc under test ($EOMC, else the build tree's), the source tree
** ($SRCDIR, else the configured one). */
const char *eomc(void);
const char *srcdir(void);

/* A test program runs one of two passes.  The ordinary pass compiles
** generated code with $CC (default cc); the clang pass (argument `clang`,
** run by tests/clang.test) compiles it with the clang configure found. */
int clang_pass(void);
/* The C compiler of this pass. */
const char *cc(void);

/* main() of a Check program: the argument `clang` selects the clang pass
** (exit TEST_SKIPPED, saying why, when configure found no clang); then
** make_suite() builds the suite of the pass and it runs.  EXIT_SUCCESS,
** EXIT_FAILURE or TEST_SKIPPED. */
int run_test_main(int argc, char **argv, Suite *(*make_suite)(void));

/* Lines (newlines) in s; entries of a directory besides . and .., -1 when
** it cannot be read. */
int count_lines(const char *s);
int count_entries(const char *dir);

typedef struct RunResult {
  int status;        /* exit status, or 128 + signal number */
  char *out;         /* captured stdout (NUL-terminated, malloc'd) */
  char *err;         /* captured stderr */
} RunResult;

/* Run argv (argv[0] looked up on PATH) with stdin from /dev/null. */
RunResult run_argv(char *const argv[]);
void run_free(RunResult *r);

/* Environment variable or a default. */
const char *env_or(const char *name, const char *fallback);

/* Create a fresh temporary directory; returns a malloc'd path. */
char *make_temp_dir(void);
/* Write `len` bytes to dir/name; returns a malloc'd path. */
char *write_file(const char *dir, const char *name, const char *data, size_t len);
/* Read a whole file (malloc'd, NUL-terminated) or NULL. */
char *read_file(const char *path, size_t *len);
/* Read up to `max` numbers separated by blanks from s into v (strtod syntax);
** stops at the first thing that is not a number.  Returns how many. */
int read_numbers(const char *s, double *v, int max);
/* rm -r of a directory made by make_temp_dir(). */
void remove_tree(const char *path);
/* The *.eom files of a folder, as malloc'd full paths in name order (a NULL
** ends the array); *n gets their count.  NULL when the folder cannot be read.
** Suites list them before running so each model can be its own loop test. */
char **model_files(const char *dir, int *n);

/* The fixture of end-to-end suites: a fresh work folder and a private
** cache of built models ($EOMC_CACHE_DIR), both removed by
** scratch_teardown. */
void scratch_setup(void);
void scratch_teardown(void);
/* The work folder, and NAME in it (four rotating buffers, as below). */
char *scratch_dir(void);
char *scratch_path(const char *name);

/* examples/NAME in the source tree.  The path lives in one of four
** rotating buffers: good until the fourth call after. */
char *example_file(const char *name);

/* "--set=NAME=V" with V to full precision (sixteen rotating buffers). */
const char *set_param_arg(const char *name, double v);

/* Run `eomc VERB ARGS... NULL` (at most 60 arguments) and keep its output. */
RunResult eomc_run(const char *verb, ...);

/* A CSV file of numbers under a header row of column names, as `eomc sim
** -o FILE` writes it. */
typedef struct CsvTable {
  int ncols, nrows;
  char **names;
  double *v; /* nrows x ncols, row-major */
} CsvTable;

/* Read a table; fails the running test when the file cannot be read or a
** cell is not a number. */
CsvTable csv_read(const char *path);
void csv_free(CsvTable *t);
/* The index of the column `name`; fails the running test when missing. */
int csv_col(const CsvTable *t, const char *name);
static inline double csv_at(const CsvTable *t, int row, int col) {
  return t->v[(size_t)row * t->ncols + col];
}
/* Run `eomc sim MODEL -o OUT ARGS... NULL`, which must succeed, and read OUT. */
CsvTable sim_csv(const char *model, const char *out, ...);

#endif
