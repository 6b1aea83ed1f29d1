/* tap_comm.c - communicator and window identity: ids agreed by all members,
 * world-rank tables. */
#include "tap.h"

#include <stdlib.h> /* malloc, free */
#include <string.h> /* memset */

/* Ids of the predefined communicators (docs/trace-format.md, byte conventions).
 */
#define ID_WORLD 0u
#define ID_SELF 1u

static int comm_keyval = MPI_KEYVAL_INVALID;
static int win_keyval = MPI_KEYVAL_INVALID;
static mc__tap_comm world_info;
static mc__tap_comm *self_info;

/* Direct-mapped cache handle -> info, so a hot loop on one communicator
 * does not pay for MPI_Comm_get_attr. Entries are dropped by the attribute
 * delete callback, which MPI calls before the handle can be reused. */
#define CACHE_N 16u
static struct {
    MPI_Comm h;
    mc__tap_comm *ci;
} cache[CACHE_N];

static unsigned cache_slot(MPI_Comm c)
{
    const uintptr_t k = MC_TAP_KEY(c);
    return (unsigned)((k >> 4) ^ (k >> 12)) & (CACHE_N - 1u);
}

/* splitmix64 finaliser (common practice for hashing integers). */
static uint64_t mix64(uint64_t x)
{
    x += 0x9e3779b97f4a7c15ull;
    x = (x ^ (x >> 30)) * 0xbf58476d1ce4e5b9ull;
    x = (x ^ (x >> 27)) * 0x94d049bb133111ebull;
    return x ^ (x >> 31);
}

/* Fold to 32 bits, keeping 0 and 1 for MPI_COMM_WORLD and MPI_COMM_SELF. */
static uint32_t fold_id(uint64_t h)
{
    uint32_t v = (uint32_t)(h ^ (h >> 32));
    return v < 2u ? v + 2u : v;
}

void mc__tap_comm_ref(mc__tap_comm *ci)
{
    if (ci && ci != &world_info)
        ci->refs++;
}

void mc__tap_comm_unref(mc__tap_comm *ci)
{
    if (!ci || ci == &world_info)
        return;
    if (--ci->refs <= 0) {
        free(ci->world);
        free(ci);
    }
}

static int comm_delete(MPI_Comm c, int keyval, void *attr, void *extra)
{
    (void)keyval;
    (void)extra;
    mc__tap_lock();
    const unsigned s = cache_slot(c);
    if (cache[s].h == c)
        cache[s].h = MPI_COMM_NULL;
    mc__tap_comm_unref((mc__tap_comm *)attr);
    mc__tap_unlock();
    return MPI_SUCCESS;
}

static int win_delete(MPI_Win w, int keyval, void *attr, void *extra)
{
    (void)w;
    (void)keyval;
    (void)extra;
    mc__tap_lock();
    mc__tap_comm_unref((mc__tap_comm *)attr);
    mc__tap_unlock();
    return MPI_SUCCESS;
}

/* Members' world ranks: the local group, or for an intercommunicator the
 * remote group (point-to-point ranks name the remote group there). */
static int fill_world_table(MPI_Comm c, mc__tap_comm *ci)
{
    int inter = 0, n = 0;
    MPI_Group g = MPI_GROUP_NULL, wg = MPI_GROUP_NULL;
    int rc = -1;
    PMPI_Comm_test_inter(c, &inter);
    if ((inter ? PMPI_Comm_remote_group(c, &g) : PMPI_Comm_group(c, &g)) !=
        MPI_SUCCESS)
        return -1;
    PMPI_Group_size(g, &n);
    int *ranks = malloc((size_t)(n > 0 ? n : 1) * sizeof *ranks);
    ci->world = malloc((size_t)(n > 0 ? n : 1) * sizeof *ci->world);
    if (!ranks || !ci->world)
        goto done;
    for (int i = 0; i < n; i++)
        ranks[i] = i;
    PMPI_Comm_group(MPI_COMM_WORLD, &wg);
    if (PMPI_Group_translate_ranks(g, n, ranks, wg, ci->world) != MPI_SUCCESS)
        goto done;
    ci->nworld = n;
    /* The smallest world rank over all members, both groups if inter. */
    int32_t m = INT32_MAX;
    for (int i = 0; i < n; i++)
        if (ci->world[i] >= 0 && ci->world[i] < m)
            m = ci->world[i];
    if (inter) {
        MPI_Group lg = MPI_GROUP_NULL;
        int ln = 0, lr = 0;
        PMPI_Comm_group(c, &lg);
        PMPI_Group_size(lg, &ln);
        for (int i = 0; i < ln; i++) {
            int w = MPI_UNDEFINED;
            lr = i;
            PMPI_Group_translate_ranks(lg, 1, &lr, wg, &w);
            if (w >= 0 && w < m)
                m = w;
        }
        PMPI_Group_free(&lg);
    }
    ci->min_world = m;
    rc = 0;
done:
    free(ranks);
    if (rc) {
        free(ci->world);
        ci->world = NULL;
    }
    if (g != MPI_GROUP_NULL)
        PMPI_Group_free(&g);
    if (wg != MPI_GROUP_NULL)
        PMPI_Group_free(&wg);
    return rc;
}

static mc__tap_comm *info_new(MPI_Comm c)
{
    mc__tap_comm *ci = calloc(1, sizeof *ci);
    if (!ci)
        return NULL;
    int size = 0;
    PMPI_Comm_size(c, &size);
    ci->size = (uint32_t)size;
    ci->refs = 1;
    if (fill_world_table(c, ci) != 0) {
        free(ci);
        return NULL;
    }
    return ci;
}

static void cache_put(MPI_Comm c, mc__tap_comm *ci)
{
    const unsigned s = cache_slot(c);
    cache[s].h = c;
    cache[s].ci = ci;
}

int mc__tap_comm_setup(void)
{
    if (PMPI_Comm_create_keyval(MPI_COMM_NULL_COPY_FN, comm_delete,
                                &comm_keyval, NULL) != MPI_SUCCESS)
        return -1;
    if (PMPI_Win_create_keyval(MPI_WIN_NULL_COPY_FN, win_delete, &win_keyval,
                               NULL) != MPI_SUCCESS)
        return -1;
    int size = 0;
    PMPI_Comm_size(MPI_COMM_WORLD, &size);
    memset(&world_info, 0, sizeof world_info);
    world_info.id = ID_WORLD;
    world_info.size = (uint32_t)size;
    world_info.world = NULL; /* identity */
    world_info.nworld = size;
    world_info.min_world = 0;
    world_info.refs = 1;
    self_info = info_new(MPI_COMM_SELF);
    if (!self_info)
        return -1;
    self_info->id = ID_SELF;
    PMPI_Comm_set_attr(MPI_COMM_SELF, comm_keyval, self_info);
    return 0;
}

void mc__tap_comm_teardown(void)
{
    /* The attribute on MPI_COMM_SELF is deleted by MPI_Finalize, which
     * frees self_info through the delete callback. */
    memset(cache, 0, sizeof cache);
}

/* A communicator not created through a wrapper of ours (MPI_Comm_idup,
 * spawn, connect/accept, MPI_Comm_create_from_group): its id can only come
 * from what every member knows without communicating, the membership.
 * Two such communicators with the same members share an id. */
static uint32_t membership_id(const mc__tap_comm *ci)
{
    uint64_t h = mix64(0x6d656d62657273ull ^ (uint64_t)ci->nworld);
    for (int32_t i = 0; i < ci->nworld; i++)
        h = mix64(h ^ (uint64_t)(uint32_t)ci->world[i]);
    return fold_id(h) | 0x80000000u;
}

mc__tap_comm *mc__tap_comm_get_locked(MPI_Comm c)
{
    if (c == MPI_COMM_WORLD)
        return &world_info;
    const unsigned s = cache_slot(c);
    if (cache[s].h == c)
        return cache[s].ci;
    void *v = NULL;
    int flag = 0;
    if (PMPI_Comm_get_attr(c, comm_keyval, &v, &flag) != MPI_SUCCESS)
        return NULL;
    mc__tap_comm *ci = flag ? (mc__tap_comm *)v : NULL;
    if (!ci) {
        ci = info_new(c);
        if (!ci)
            return NULL;
        ci->id = membership_id(ci);
        if (PMPI_Comm_set_attr(c, comm_keyval, ci) != MPI_SUCCESS) {
            mc__tap_comm_unref(ci);
            return NULL;
        }
    }
    cache_put(c, ci);
    return ci;
}

/* ---- new communicators -------------------------------------------------- */

/* Give @nc (made from @parent by a collective call, or MPI_COMM_NULL on
 * ranks not in it) its id: hash(parent id, creation sequence number on the
 * parent, smallest world rank among the members), made equal on all members
 * by a MIN reduction over @nc; for an intercommunicator two reductions
 * (each group first learns the other's minimum, then its own). */
static void comm_created(MPI_Comm parent, const MPI_Comm *ncp)
{
    mc__tap_lock();
    mc__tap_comm *pi = mc__tap_comm_get_locked(parent);
    uint32_t pid = 0, seq = 0;
    if (pi) {
        pid = pi->id;
        seq = pi->next_seq++;
    }
    mc__tap_unlock();
    if (!pi || !ncp || *ncp == MPI_COMM_NULL)
        return;
    const MPI_Comm nc = *ncp;
    mc__tap_comm *ci = info_new(nc);
    if (!ci)
        return;
    uint32_t id = fold_id(mix64(mix64(mix64((uint64_t)pid) ^ seq) ^
                                (uint64_t)(uint32_t)ci->min_world));
    uint32_t agreed = id;
    int inter = 0;
    PMPI_Comm_test_inter(nc, &inter);
    if (PMPI_Allreduce(&id, &agreed, 1, MPI_UINT32_T, MPI_MIN, nc) ==
            MPI_SUCCESS &&
        inter) {
        uint32_t theirs = agreed;
        uint32_t ours = id;
        if (PMPI_Allreduce(&theirs, &ours, 1, MPI_UINT32_T, MPI_MIN, nc) ==
            MPI_SUCCESS)
            agreed = theirs < ours ? theirs : ours;
    }
    ci->id = agreed;
    if (PMPI_Comm_set_attr(nc, comm_keyval, ci) != MPI_SUCCESS) {
        mc__tap_lock();
        mc__tap_comm_unref(ci);
        mc__tap_unlock();
    }
}

/* Each wrapper: call MPI, then name the new communicator. Our own
 * reductions go through PMPI and inside the wrapper, so they are never
 * recorded. */
#define COMM_WRAP(call, parent, ncp)                                           \
    if (!mc__tap_enter())                                                      \
        return call;                                                           \
    const int rc = call;                                                       \
    if (rc == MPI_SUCCESS)                                                     \
        comm_created(parent, ncp);                                             \
    mc__tap_leave();                                                           \
    return rc

int MPI_Comm_dup(MPI_Comm comm, MPI_Comm *newcomm)
{
    COMM_WRAP(PMPI_Comm_dup(comm, newcomm), comm, newcomm);
}

int MPI_Comm_dup_with_info(MPI_Comm comm, MPI_Info info, MPI_Comm *newcomm)
{
    COMM_WRAP(PMPI_Comm_dup_with_info(comm, info, newcomm), comm, newcomm);
}

int MPI_Comm_split(MPI_Comm comm, int color, int key, MPI_Comm *newcomm)
{
    COMM_WRAP(PMPI_Comm_split(comm, color, key, newcomm), comm, newcomm);
}

int MPI_Comm_split_type(MPI_Comm comm, int split_type, int key, MPI_Info info,
                        MPI_Comm *newcomm)
{
    COMM_WRAP(PMPI_Comm_split_type(comm, split_type, key, info, newcomm), comm,
              newcomm);
}

int MPI_Comm_create(MPI_Comm comm, MPI_Group group, MPI_Comm *newcomm)
{
    COMM_WRAP(PMPI_Comm_create(comm, group, newcomm), comm, newcomm);
}

int MPI_Comm_create_group(MPI_Comm comm, MPI_Group group, int tag,
                          MPI_Comm *newcomm)
{
    COMM_WRAP(PMPI_Comm_create_group(comm, group, tag, newcomm), comm, newcomm);
}

int MPI_Cart_create(MPI_Comm comm_old, int ndims, const int dims[],
                    const int periods[], int reorder, MPI_Comm *comm_cart)
{
    COMM_WRAP(
        PMPI_Cart_create(comm_old, ndims, dims, periods, reorder, comm_cart),
        comm_old, comm_cart);
}

int MPI_Cart_sub(MPI_Comm comm, const int remain_dims[], MPI_Comm *newcomm)
{
    COMM_WRAP(PMPI_Cart_sub(comm, remain_dims, newcomm), comm, newcomm);
}

int MPI_Graph_create(MPI_Comm comm_old, int nnodes, const int index[],
                     const int edges[], int reorder, MPI_Comm *comm_graph)
{
    COMM_WRAP(
        PMPI_Graph_create(comm_old, nnodes, index, edges, reorder, comm_graph),
        comm_old, comm_graph);
}

int MPI_Dist_graph_create(MPI_Comm comm_old, int n, const int nodes[],
                          const int degrees[], const int targets[],
                          const int weights[], MPI_Info info, int reorder,
                          MPI_Comm *newcomm)
{
    COMM_WRAP(PMPI_Dist_graph_create(comm_old, n, nodes, degrees, targets,
                                     weights, info, reorder, newcomm),
              comm_old, newcomm);
}

int MPI_Dist_graph_create_adjacent(MPI_Comm comm_old, int indegree,
                                   const int sources[],
                                   const int sourceweights[], int outdegree,
                                   const int destinations[],
                                   const int destweights[], MPI_Info info,
                                   int reorder, MPI_Comm *comm_dist_graph)
{
    COMM_WRAP(PMPI_Dist_graph_create_adjacent(
                  comm_old, indegree, sources, sourceweights, outdegree,
                  destinations, destweights, info, reorder, comm_dist_graph),
              comm_old, comm_dist_graph);
}

int MPI_Intercomm_create(MPI_Comm local_comm, int local_leader,
                         MPI_Comm peer_comm, int remote_leader, int tag,
                         MPI_Comm *newintercomm)
{
    COMM_WRAP(PMPI_Intercomm_create(local_comm, local_leader, peer_comm,
                                    remote_leader, tag, newintercomm),
              local_comm, newintercomm);
}

int MPI_Intercomm_merge(MPI_Comm intercomm, int high, MPI_Comm *newintracomm)
{
    COMM_WRAP(PMPI_Intercomm_merge(intercomm, high, newintracomm), intercomm,
              newintracomm);
}

/* ---- windows ------------------------------------------------------------ */

int mc__tap_win_attach(MPI_Win win, MPI_Comm comm)
{
    mc__tap_lock();
    mc__tap_comm *ci = mc__tap_comm_get_locked(comm);
    if (ci)
        mc__tap_comm_ref(ci);
    mc__tap_unlock();
    if (!ci)
        return -1;
    if (PMPI_Win_set_attr(win, win_keyval, ci) != MPI_SUCCESS) {
        mc__tap_lock();
        mc__tap_comm_unref(ci);
        mc__tap_unlock();
        return -1;
    }
    return 0;
}

mc__tap_comm *mc__tap_win_get_locked(MPI_Win win)
{
    void *v = NULL;
    int flag = 0;
    if (PMPI_Win_get_attr(win, win_keyval, &v, &flag) != MPI_SUCCESS || !flag)
        return NULL;
    return (mc__tap_comm *)v;
}
