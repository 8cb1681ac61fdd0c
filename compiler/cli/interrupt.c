/*
** interrupt.c — note SIGINT and SIGTERM for a run to stop at its next row
** (see interrupt.h).  The handler only stores the signal number: nothing
** else is async-signal-safe here.
*/
#include "cli/interrupt.h"

#include <signal.h>
#include <string.h>

static volatile sig_atomic_t noted;
static struct sigaction old_int, old_term;
static int watching;

static void note_signal(int sig) { noted = sig; }

void interrupt_watch(void) {
  struct sigaction sa;
  if (watching) return;
  memset(&sa, 0, sizeof sa);
  sa.sa_handler = note_signal;
  sigemptyset(&sa.sa_mask);
  /* Writes in progress go on (SA_RESTART); a second signal is fatal
  ** (SA_RESETHAND), so a stuck run can still be killed from the keyboard. */
  sa.sa_flags = SA_RESTART | SA_RESETHAND;
  noted = 0;
  sigaction(SIGINT, NULL, &old_int);
  sigaction(SIGTERM, NULL, &old_term);
  /* A signal ignored on entry stays ignored (a job started in the
  ** background of a non-interactive shell ignores SIGINT). */
  if (old_int.sa_handler != SIG_IGN) sigaction(SIGINT, &sa, NULL);
  if (old_term.sa_handler != SIG_IGN) sigaction(SIGTERM, &sa, NULL);
  watching = 1;
}

void interrupt_unwatch(void) {
  if (!watching) return;
  sigaction(SIGINT, &old_int, NULL);
  sigaction(SIGTERM, &old_term, NULL);
  watching = 0;
}

int interrupt_signal(void) { return (int)noted; }

const char *interrupt_name(int sig) {
  return sig == SIGINT ? "SIGINT" : sig == SIGTERM ? "SIGTERM" : "a signal";
}
