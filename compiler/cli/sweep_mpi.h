/*
** sweep_mpi.h — `eomc sweep` across processes: when eomc was built with MPI
** and started by an MPI launcher, the runs are split over the ranks (run r
** on rank r mod K) and rank 0 receives every result to write them in run
** order.  Without MPI (or without a launcher) there is one rank and these
** calls do nothing.
*/
#ifndef EOMC_SWEEP_MPI_H
#define EOMC_SWEEP_MPI_H

#include <stddef.h>

typedef struct SweepComm {
  int rank, size;
  int active;       /* MPI_Init was called */
  int local_size;   /* ranks on this machine (for the default thread count) */
} SweepComm;

/* Join the MPI job when launched by one; else rank 0 of 1. */
void sweep_comm_init(SweepComm *c, int *argc, char ***argv);
/* Leave it (MPI_Finalize). */
void sweep_comm_finish(SweepComm *c);
/* The largest of every rank's rc (all ranks call it). */
int sweep_comm_max(const SweepComm *c, int rc);
/* Wait for every rank. */
void sweep_comm_barrier(const SweepComm *c);
/* Every rank sends its `len` bytes; rank 0 gets them all, rank by rank, in
** one malloc'd block (*all) with each rank's length in *lens (malloc'd,
** size entries).  Other ranks get NULLs.  0, or -1 on failure (at every
** rank). */
int sweep_comm_gather(const SweepComm *c, const void *mine, size_t len, unsigned char **all,
                      size_t **lens);

#endif
