/*
** sweep_mpi.c — the MPI side of `eomc sweep` (see sweep_mpi.h).  Compiled
** with HAVE_MPI when configure found an MPI library; the launcher is
** recognised by the environment it sets, so a plain `eomc sweep` never
** starts MPI at all.
*/
#include "cli/sweep_mpi.h"

#ifdef HAVE_CONFIG_H
#include "config.h"
#endif

#include <limits.h>
#include <stdlib.h>
#include <string.h>

#ifdef HAVE_MPI
#include <mpi.h>

/* Started by mpirun/mpiexec (Open MPI, or a PMI launcher)? */
static int launched(void) {
  return getenv("OMPI_COMM_WORLD_SIZE") || getenv("PMI_SIZE") || getenv("PMIX_RANK");
}

void sweep_comm_init(SweepComm *c, int *argc, char ***argv) {
  memset(c, 0, sizeof *c);
  c->size = c->local_size = 1;
  if (!launched()) return;
  MPI_Init(argc, argv);
  c->active = 1;
  MPI_Comm_rank(MPI_COMM_WORLD, &c->rank);
  MPI_Comm_size(MPI_COMM_WORLD, &c->size);
  MPI_Comm local;
  if (MPI_Comm_split_type(MPI_COMM_WORLD, MPI_COMM_TYPE_SHARED, 0, MPI_INFO_NULL, &local) ==
      MPI_SUCCESS) {
    MPI_Comm_size(local, &c->local_size);
    MPI_Comm_free(&local);
  }
}

void sweep_comm_finish(SweepComm *c) {
  if (c->active) MPI_Finalize();
  c->active = 0;
}

int sweep_comm_max(const SweepComm *c, int rc) {
  int all = rc;
  if (c->active) MPI_Allreduce(&rc, &all, 1, MPI_INT, MPI_MAX, MPI_COMM_WORLD);
  return all;
}

void sweep_comm_barrier(const SweepComm *c) {
  if (c->active) MPI_Barrier(MPI_COMM_WORLD);
}

int sweep_comm_gather(const SweepComm *c, const void *mine, size_t len, unsigned char **all,
                      size_t **lens) {
  *all = NULL, *lens = NULL;
  int ok = len <= INT_MAX;
  int *counts = NULL, *displs = NULL, my = (int)len;
  if (c->rank == 0) {
    counts = calloc((size_t)c->size, sizeof(int));
    displs = calloc((size_t)c->size, sizeof(int));
    *lens = calloc((size_t)c->size, sizeof(size_t));
    if (!counts || !displs || !*lens) ok = 0;
  }
  if (sweep_comm_max(c, !ok) != 0) goto fail;
  MPI_Gather(&my, 1, MPI_INT, counts, 1, MPI_INT, 0, MPI_COMM_WORLD);
  if (c->rank == 0) {
    long total = 0;
    for (int r = 0; r < c->size; r++) {
      displs[r] = (int)total;
      (*lens)[r] = (size_t)counts[r];
      total += counts[r];
    }
    ok = total <= INT_MAX && (*all = malloc((size_t)total + 1)) != NULL;
  }
  if (sweep_comm_max(c, !ok) != 0) goto fail;
  MPI_Gatherv(mine, my, MPI_BYTE, *all, counts, displs, MPI_BYTE, 0, MPI_COMM_WORLD);
  free(counts), free(displs);
  return 0;
fail:
  free(counts), free(displs), free(*all), free(*lens);
  *all = NULL, *lens = NULL;
  return -1;
}

#else /* no MPI: one process */

void sweep_comm_init(SweepComm *c, int *argc, char ***argv) {
  (void)argc, (void)argv;
  memset(c, 0, sizeof *c);
  c->size = c->local_size = 1;
}
void sweep_comm_finish(SweepComm *c) { (void)c; }
int sweep_comm_max(const SweepComm *c, int rc) { return (void)c, rc; }
void sweep_comm_barrier(const SweepComm *c) { (void)c; }
int sweep_comm_gather(const SweepComm *c, const void *mine, size_t len, unsigned char **all,
                      size_t **lens) {
  (void)c, (void)mine, (void)len;
  *all = NULL, *lens = NULL;
  return -1; /* never called with one rank */
}

#endif
