/* pixpost command line — `mpirun -n R pixpost batch ...` (builds configured
 * with -DPIXPOST_MPI=ON): rank 0 is a dispatcher that hands frame indices
 * out one at a time to ranks 1..R-1 as they ask (so slow frames do not hold
 * up a static slice), collects each finished frame's manifest row and
 * writes the one manifest. Every rank lists INDIR itself (the list is
 * sorted, so all ranks agree), so only indices and rows travel.
 *
 * A worker rank runs each frame in a forked child exactly like a local
 * batch (same fault isolation; the child never calls MPI and leaves with
 * _exit). Rank 0 waits with MPI_Test and a 2 ms sleep instead of a
 * blocking receive, because Open MPI's blocking receive spins a core that
 * the workers need. MPI is initialised only when a launcher started us
 * (Open MPI's OMPI_COMM_WORLD_SIZE or a PMI/PMIx rank in the environment),
 * so a plain `pixpost batch` of an MPI build behaves like any other build.
 *
 * Protocol: worker -> 0 tag READY (empty) once, then tag RESULT {index,
 * row} after each frame; 0 -> worker tag WORK {index} or {-1} = stop.
 * Cost: two small messages per frame.
 */
#include "batch.h"

#ifdef PIXPOST_MPI
#include <mpi.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

enum { TAG_READY = 1, TAG_RESULT = 2, TAG_WORK = 3 };

typedef struct mpi_result {
    long long idx;
    batch_row row;
} mpi_result;

const char *cli_mpi_support(void)
{
    return "yes";
}

int batch_mpi_active(int *rank, int *size)
{
    *rank = 0;
    *size = 1;
    if (!getenv("OMPI_COMM_WORLD_SIZE") && !getenv("PMI_SIZE") && !getenv("PMIX_RANK"))
        return 0;
    int init = 0;
    MPI_Initialized(&init);
    if (!init && MPI_Init(NULL, NULL) != MPI_SUCCESS)
        return 0;
    MPI_Comm_rank(MPI_COMM_WORLD, rank);
    MPI_Comm_size(MPI_COMM_WORLD, size);
    return 1;
}

void batch_mpi_finish(void)
{
    int init = 0, fin = 0;
    MPI_Initialized(&init);
    MPI_Finalized(&fin);
    if (init && !fin)
        MPI_Finalize();
}

static void nap(void)
{
    struct timespec t = {0, 2000000};
    nanosleep(&t, NULL);
}

/* Receives any message into *res (polling); returns the status. */
static MPI_Status poll_recv(mpi_result *res)
{
    MPI_Request req;
    MPI_Status st;
    int flag = 0;
    MPI_Irecv(res, (int)sizeof *res, MPI_BYTE, MPI_ANY_SOURCE, MPI_ANY_TAG, MPI_COMM_WORLD, &req);
    while (MPI_Test(&req, &flag, &st), !flag)
        nap();
    return st;
}

void batch_mpi_manager(const batch_ctx *c, const size_t *todo, size_t ntodo, batch_done_fn done,
                       void *ctx, int size)
{
    (void)c;
    size_t next = 0;
    int active = size - 1;
    mpi_result *res = malloc(sizeof *res);
    if (!res)
        return;
    while (active > 0) {
        MPI_Status st = poll_recv(res);
        if (st.MPI_TAG == TAG_RESULT && res->idx >= 0)
            done(ctx, (size_t)res->idx, &res->row);
        long long work = -1;
        if (!*cli_stop_flag() && next < ntodo)
            work = (long long)todo[next++];
        else
            active--;
        MPI_Send(&work, 1, MPI_LONG_LONG, st.MPI_SOURCE, TAG_WORK, MPI_COMM_WORLD);
    }
    free(res);
}

typedef struct one_row {
    batch_row *row;
} one_row;

static void keep_row(void *ctx, size_t idx, const batch_row *row)
{
    (void)idx;
    *((one_row *)ctx)->row = *row;
}

void batch_mpi_worker(const batch_ctx *c)
{
    mpi_result *res = malloc(sizeof *res);
    if (!res)
        MPI_Abort(MPI_COMM_WORLD, 1);
    int tag = TAG_READY;
    res->idx = -1;
    cli_stop_install(0);
    for (;;) {
        MPI_Send(res, (int)sizeof *res, MPI_BYTE, 0, tag, MPI_COMM_WORLD);
        long long work;
        MPI_Recv(&work, 1, MPI_LONG_LONG, 0, TAG_WORK, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
        if (work < 0 || (size_t)work >= c->nframes)
            break;
        size_t idx = (size_t)work;
        one_row keep = {&res->row};
        batch_row_init(&res->row, &c->frames[idx]);
        batch_run_local(c, &idx, 1, 1, keep_row, &keep);
        res->idx = work;
        tag = TAG_RESULT;
    }
    cli_stop_uninstall();
    free(res);
}

#else /* no MPI: a plain batch, whatever the environment says */

const char *cli_mpi_support(void)
{
    return "no";
}

int batch_mpi_active(int *rank, int *size)
{
    *rank = 0;
    *size = 1;
    return 0;
}

void batch_mpi_finish(void) {}

void batch_mpi_manager(const batch_ctx *c, const size_t *todo, size_t ntodo, batch_done_fn done,
                       void *ctx, int size)
{
    (void)size;
    batch_run_local(c, todo, ntodo, 1, done, ctx);
}

void batch_mpi_worker(const batch_ctx *c)
{
    (void)c;
}

#endif
