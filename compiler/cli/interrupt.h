/*
** interrupt.h — a long run stopped with Ctrl-C (SIGINT) or SIGTERM ends
** cleanly: the handler only notes the signal; the run checks the note at
** each row, stops, removes its temporaries and says where it stopped.  A
** second signal while the first is handled ends the process at once.
*/
#ifndef EOMC_INTERRUPT_H
#define EOMC_INTERRUPT_H

/* Start noting SIGINT and SIGTERM (the previous handlers are kept). */
void interrupt_watch(void);
/* Put the previous handlers back. */
void interrupt_unwatch(void);
/* The signal noted since interrupt_watch(), or 0. */
int interrupt_signal(void);
/* "SIGINT" or "SIGTERM". */
const char *interrupt_name(int sig);

#endif
