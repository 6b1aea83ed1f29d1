/* synth.c - the halo solver scenario: geometry, sizes, timing, records. */
#include <msgcensus/synth.h>

#include <stdio.h>  /* snprintf */
#include <stdlib.h> /* calloc, malloc, free */
#include <string.h> /* memcpy, strcmp */

#include <msgcensus/ops.h> /* MC_OP_*, MC_DIR_* */

/* ---- decks -------------------------------------------------------------- */

static const mc_synth_deck decks[] = {
    {"deck-a", "1 variable, halo 1, transpose every 50 steps, no one-sided", 1,
     1, 50, 100, 200, 0, 8, 256},
    {"deck-b",
     "5 variables, halo 2, transpose every 10 steps, MPI_Put every 5 steps", 5,
     2, 10, 25, 50, 5, 16, 1024},
};

size_t mc_synth_deck_count(void) { return sizeof decks / sizeof decks[0]; }

const mc_synth_deck *mc_synth_deck_at(size_t i)
{
    return i < mc_synth_deck_count() ? &decks[i] : NULL;
}

const mc_synth_deck *mc_synth_deck_find(const char *name)
{
    for (size_t i = 0; name && i < mc_synth_deck_count(); i++)
        if (strcmp(decks[i].name, name) == 0)
            return &decks[i];
    return NULL;
}

void mc_synth_params_init(mc_synth_params *p)
{
    memset(p, 0, sizeof *p);
    p->ranks = 8;
    p->steps = 100;
    p->seed = 1;
    p->deck = &decks[0];
    p->scaling = MC_SYNTH_WEAK;
    for (int i = 0; i < 3; i++) {
        p->local[i] = 32;
        p->global[i] = 128;
    }
}

/* ---- pseudo-random numbers ---------------------------------------------- */

/* splitmix64 seeds xoshiro256** and hashes seeds; both are published
 * public-domain generators (Vigna and Blackman), re-implemented here. */
static uint64_t splitmix64(uint64_t *x)
{
    uint64_t z = (*x += 0x9e3779b97f4a7c15ull);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
    return z ^ (z >> 31);
}

static uint64_t hash64(uint64_t a, uint64_t b)
{
    uint64_t x = a ^ (b * 0xd1b54a32d192ed03ull);
    return splitmix64(&x);
}

static uint64_t rotl(uint64_t x, int k) { return (x << k) | (x >> (64 - k)); }

static uint64_t xoshiro(uint64_t s[4])
{
    const uint64_t out = rotl(s[1] * 5, 7) * 9;
    const uint64_t t = s[1] << 17;
    s[2] ^= s[0];
    s[3] ^= s[1];
    s[1] ^= s[2];
    s[0] ^= s[3];
    s[2] ^= t;
    s[3] = rotl(s[3], 45);
    return out;
}

/* ---- rank grid and geometry --------------------------------------------- */

void mc_synth_factor(int32_t ranks, int32_t dims[3])
{
    dims[0] = dims[1] = dims[2] = 1;
    if (ranks < 1)
        return;
    uint64_t best = UINT64_MAX;
    for (int32_t c = 1; (int64_t)c * c * c <= ranks; c++) {
        if (ranks % c)
            continue;
        const int32_t rest = ranks / c;
        for (int32_t b = c; (int64_t)b * b <= rest; b++) {
            if (rest % b)
                continue;
            const int32_t a = rest / b; /* a >= b >= c */
            const uint64_t surface = (uint64_t)a * (uint64_t)b +
                                     (uint64_t)b * (uint64_t)c +
                                     (uint64_t)a * (uint64_t)c;
            if (surface < best || (surface == best && a < dims[0])) {
                best = surface;
                dims[0] = a;
                dims[1] = b;
                dims[2] = c;
            }
        }
    }
}

/* Cells of the sub-domain at coordinate @c along dimension @i. Strong
 * scaling gives the first (global % dims) coordinates one extra cell. */
static uint32_t cells_at(const mc_synth_params *p, const int32_t dims[3], int i,
                         int32_t c)
{
    if (p->scaling == MC_SYNTH_WEAK)
        return p->local[i];
    const uint32_t d = (uint32_t)dims[i];
    return p->global[i] / d + ((uint32_t)c < p->global[i] % d ? 1u : 0u);
}

static void coords_of(const int32_t dims[3], int32_t rank, int32_t c[3])
{
    c[0] = rank % dims[0];
    c[1] = (rank / dims[0]) % dims[1];
    c[2] = rank / (dims[0] * dims[1]);
}

static int32_t rank_of(const int32_t dims[3], const int32_t c[3])
{
    return c[0] + dims[0] * (c[1] + dims[1] * c[2]);
}

/* The neighbour of @c in direction @d, or -1 at a non-periodic boundary. */
static int32_t neighbour(const mc_synth_params *p, const int32_t dims[3],
                         const int32_t c[3], const int d[3])
{
    int32_t n[3];
    for (int i = 0; i < 3; i++) {
        n[i] = c[i] + d[i];
        if (n[i] < 0 || n[i] >= dims[i]) {
            if (!p->periodic)
                return -1;
            n[i] = (n[i] + dims[i]) % dims[i];
        }
    }
    return rank_of(dims, n);
}

/* Direction of index 0..26, idx = (dx+1) + 3 (dy+1) + 9 (dz+1); 13 is the
 * centre, and 26 - idx is the opposite direction. */
static void dir_of(int idx, int d[3])
{
    d[0] = idx % 3 - 1;
    d[1] = (idx / 3) % 3 - 1;
    d[2] = idx / 9 - 1;
}

/* Bytes of the halo region in direction @d: the halo width across every
 * dimension the direction crosses, the full sub-domain along the others. */
static uint64_t halo_bytes(const uint32_t cells[3], uint32_t halo,
                           uint32_t vars, const int d[3])
{
    uint64_t n = (uint64_t)vars * 8u;
    for (int i = 0; i < 3; i++)
        n *= d[i] ? halo : cells[i];
    return n;
}

static uint32_t ceil_log2(uint64_t x)
{
    uint32_t k = 0;
    while ((1ull << k) < x)
        k++;
    return k;
}

static uint64_t gcd64(uint64_t a, uint64_t b)
{
    while (b) {
        const uint64_t t = a % b;
        a = b;
        b = t;
    }
    return a;
}

#define MAX_EXTRA_BLOCKS 48u

/* --uneven: the rank's position q in a seeded permutation of the ranks sets
 * its refined-block count to floor(48 (q / (P-1))^3), a cubic skew: most
 * ranks get few blocks, a few get many. */
static uint32_t extra_blocks(const mc_synth_params *p, int32_t rank)
{
    if (!p->uneven || p->ranks < 2)
        return 0;
    const uint64_t P = (uint64_t)p->ranks;
    uint64_t a = 1 + hash64(p->seed, 0x756e6576656eull) % P;
    while (gcd64(a, P) != 1)
        a = a % P + 1;
    const uint64_t off = hash64(p->seed, 0x6f6666736574ull) % P;
    const uint64_t q = ((uint64_t)rank * a + off) % P;
    const double f = (double)q / (double)(P - 1);
    return (uint32_t)(MAX_EXTRA_BLOCKS * f * f * f);
}

int mc_synth_check(const mc_synth_params *p, mc_errinfo *err)
{
    if (!p || !p->deck)
        return mc_errinfo_set(err, MC_EINVAL, NULL, -1, -1, "no deck");
    if (p->ranks < 1 || p->ranks > 1000000)
        return mc_errinfo_set(err, MC_ERANGE, NULL, -1, -1,
                              "ranks must be 1 to 1000000, not %ld",
                              (long)p->ranks);
    if (p->steps < 1 || p->steps > (1ull << 40))
        return mc_errinfo_set(err, MC_ERANGE, NULL, -1, -1,
                              "steps must be 1 to 2^40");
    const mc_synth_deck *dk = p->deck;
    if (dk->vars < 1 || dk->vars > 64 || dk->halo < 1 || dk->halo > 16 ||
        dk->transpose_every < 1 || dk->bcast_every < 1 ||
        dk->checkpoint_every < 1)
        return mc_errinfo_set(err, MC_EINVAL, NULL, -1, -1,
                              "deck %s: variables 1..64, halo 1..16 and "
                              "periods of at least 1 are required",
                              dk->name ? dk->name : "?");
    if (p->scaling != MC_SYNTH_WEAK && p->scaling != MC_SYNTH_STRONG)
        return mc_errinfo_set(err, MC_EINVAL, NULL, -1, -1, "unknown scaling");
    int32_t dims[3];
    mc_synth_factor(p->ranks, dims);
    uint64_t volume = 1;
    for (int i = 0; i < 3; i++) {
        const uint32_t n =
            p->scaling == MC_SYNTH_WEAK ? p->local[i] : p->global[i];
        if (n > (1u << 20))
            return mc_errinfo_set(err, MC_ERANGE, NULL, -1, -1,
                                  "grid dimension %u above 2^20", n);
        /* The smallest sub-domain (strong: floor of the split) must be at
         * least one halo width thick, or halo regions would overlap. */
        const uint32_t smallest =
            p->scaling == MC_SYNTH_WEAK ? n : n / (uint32_t)dims[i];
        if (smallest < p->deck->halo)
            return mc_errinfo_set(
                err, MC_EINVAL, NULL, -1, -1,
                "sub-domain of %u cells along %c is thinner than halo %u "
                "(rank grid %ldx%ldx%ld)",
                smallest, "xyz"[i], p -> deck -> halo, (long)dims[0],
                (long)dims[1], (long)dims[2]);
        volume *= smallest + (p->scaling == MC_SYNTH_STRONG ? 1u : 0u);
    }
    if (volume > (1ull << 31))
        return mc_errinfo_set(err, MC_ERANGE, NULL, -1, -1,
                              "more than 2^31 cells per rank");
    return 0;
}

/* Geometry of @rank on the rank grid @dims (factorised once by callers
 * that visit every rank). */
static void geometry(const mc_synth_params *p, const int32_t dims[3],
                     int32_t rank, mc_synth_rank_info *out)
{
    memset(out, 0, sizeof *out);
    memcpy(out->dims, dims, sizeof out->dims);
    coords_of(out->dims, rank, out->coord);
    for (int i = 0; i < 3; i++)
        out->cells[i] = cells_at(p, out->dims, i, out->coord[i]);
    for (int idx = 0; idx < 27; idx++) {
        int d[3];
        dir_of(idx, d);
        if (idx == 13 || neighbour(p, out->dims, out->coord, d) < 0)
            continue;
        out->neighbours++;
        if (abs(d[0]) + abs(d[1]) + abs(d[2]) == 1)
            out->faces++;
    }
    out->extra_blocks = extra_blocks(p, rank);
    out->row_comm_id = 1u + (uint32_t)out->coord[1] +
                       (uint32_t)out->dims[1] * (uint32_t)out->coord[2];
    out->row_size = out->dims[0];
    out->even_volumes = 1;
    if (p->scaling == MC_SYNTH_STRONG)
        for (int i = 0; i < 3; i++)
            if (p->global[i] % (uint32_t)out->dims[i])
                out->even_volumes = 0;
}

int mc_synth_rank_geometry(const mc_synth_params *p, int32_t rank,
                           mc_synth_rank_info *out)
{
    if (!p || !out || rank < 0 || rank >= p->ranks)
        return MC_EINVAL;
    int32_t dims[3];
    mc_synth_factor(p->ranks, dims);
    geometry(p, dims, rank, out);
    return 0;
}

/* Number of s in [0, S) with s % period == 0, and with (s+1) % period == 0. */
static uint64_t count_at_start(uint64_t S, uint32_t period)
{
    return period ? (S + period - 1) / period : 0;
}
static uint64_t count_at_end(uint64_t S, uint32_t period)
{
    return period ? S / period : 0;
}

/* Records of a rank with @per_step records in every step and @faces face
 * neighbours, over @p->steps steps (the schedule of emit_step). */
static uint64_t records_of(const mc_synth_params *p, uint64_t per_step,
                           uint64_t faces)
{
    const mc_synth_deck *dk = p->deck;
    const uint64_t S = p->steps;
    uint64_t n = S * per_step;
    n += faces * count_at_start(S, dk->put_every);
    n += count_at_start(S, dk->bcast_every);
    n += count_at_end(S, dk->transpose_every);
    n += count_at_end(S, dk->checkpoint_every) +
         (dk->checkpoint_every && S % dk->checkpoint_every ? 1u : 0u);
    return n;
}

/* Halo records plus the MPI_Allreduce: what every step emits. */
static uint64_t per_step_of(const mc_synth_rank_info *ri)
{
    return 2u * ri->neighbours + 12u * ri->extra_blocks + 1u;
}

uint64_t mc_synth_rank_records(const mc_synth_params *p, int32_t rank)
{
    mc_synth_rank_info ri;
    if (mc_synth_rank_geometry(p, rank, &ri))
        return 0;
    return records_of(p, per_step_of(&ri), ri.faces);
}

uint64_t mc_synth_file_bytes(uint64_t records, uint32_t block_records,
                             int footer)
{
    const uint64_t br =
        block_records ? block_records : MC_BLOCK_DEFAULT_RECORDS;
    const uint64_t blocks = (records + br - 1) / br;
    uint64_t n = MC_TRACE_HEADER_SIZE + blocks * MC_BLOCK_HEADER_SIZE +
                 records * MC_RECORD_SIZE;
    if (footer) /* MCIX, count, entries, total, checksum; then the trailer */
        n += 8u + blocks * MC_FOOTER_ENTRY_SIZE + 16u + MC_TRAILER_SIZE;
    return n;
}

/* Campaign size from per-rank shapes (per-step records, faces). */
static uint64_t bytes_of(const mc_synth_params *p, const uint32_t *shape,
                         uint32_t block_records, int footer)
{
    uint64_t n = 0;
    for (int32_t r = 0; r < p->ranks; r++)
        n += mc_synth_file_bytes(records_of(p, shape[2 * r], shape[2 * r + 1]),
                                 block_records, footer);
    return n;
}

/* Per rank: records per step and face count, for the size planning. */
static uint32_t *shapes(const mc_synth_params *p)
{
    uint32_t *shape = malloc(2u * (size_t)p->ranks * sizeof *shape);
    if (!shape)
        return NULL;
    int32_t dims[3];
    mc_synth_factor(p->ranks, dims);
    for (int32_t r = 0; r < p->ranks; r++) {
        mc_synth_rank_info ri;
        geometry(p, dims, r, &ri);
        shape[2 * r] = (uint32_t)per_step_of(&ri);
        shape[2 * r + 1] = ri.faces;
    }
    return shape;
}

uint64_t mc_synth_campaign_bytes(const mc_synth_params *p,
                                 uint32_t block_records, int footer)
{
    uint32_t *shape = shapes(p);
    uint64_t n = 0;
    if (shape) {
        n = bytes_of(p, shape, block_records, footer);
    } else { /* no memory for the table: visit the ranks one by one */
        for (int32_t r = 0; r < p->ranks; r++)
            n += mc_synth_file_bytes(mc_synth_rank_records(p, r), block_records,
                                     footer);
    }
    free(shape);
    return n;
}

int mc_synth_steps_for_size(const mc_synth_params *p, uint64_t target,
                            uint32_t block_records, int footer, uint64_t *steps)
{
    if (!p || !steps || mc_synth_check(p, NULL))
        return MC_EINVAL;
    uint32_t *shape = shapes(p);
    if (!shape)
        return MC_ENOMEM;
    /* The size grows monotonically with the step count: bisect. */
    mc_synth_params q = *p;
    uint64_t lo = 1, hi = 1ull << 40;
    while (lo < hi) {
        q.steps = lo + (hi - lo + 1) / 2;
        if (bytes_of(&q, shape, block_records, footer) <= target)
            lo = q.steps;
        else
            hi = q.steps - 1;
    }
    free(shape);
    *steps = lo;
    return 0;
}

/* Seconds from 1970-01-01 to 2026-01-01 00:00:00 UTC (56 years, 14 leap
 * days): the base of the invented time stamps. */
#define SYNTH_BASE_UNIX_S 1767225600ull
#define NS_PER_S 1000000000ull

void mc_synth_header(const mc_synth_params *p, int32_t rank,
                     mc_trace_header *hdr)
{
    mc_trace_header_init(hdr, rank, p->ranks);
    hdr->clock_res_ps = 1000;
    /* The campaign starts at a seeded second within 2026; each rank's
     * clock epoch lies up to 1 ms later (processes start at slightly
     * different times), and the file is created 2 ms after its epoch. */
    const uint64_t start_s = SYNTH_BASE_UNIX_S + hash64(p->seed, 0) % 31536000u;
    const uint64_t skew = hash64(p->seed, 1u + (uint64_t)rank) % 1000000u;
    hdr->epoch_unix_ns = start_s * NS_PER_S + skew;
    hdr->created_unix_ns = (int64_t)(hdr->epoch_unix_ns + 2000000u);
    snprintf(hdr->host, sizeof hdr->host, "synth-node-%03ld", (long)(rank / 4));
}

/* ---- generator ---------------------------------------------------------- */

/* Timing model (docs/synth.md): every call costs a latency plus a size
 * term, times a seeded jitter of 0..25 %; calls are separated by short
 * seeded gaps, and a compute phase proportional to the sub-domain volume
 * opens each step. All times are in ns. */
#define T_IRECV 300u
#define T_ISEND 400u /* plus bytes / 10 (10 GB/s copy) */
#define T_PUT 500u   /* plus bytes / 10 */
#define T_WAIT 2000u /* plus step halo bytes / 5 (5 GB/s) */
#define T_FENCE 1500u
#define T_COLL 1200u       /* per tree level */
#define T_A2A 2000u        /* plus per peer 1000 + bytes / 5 */
#define T_GATHER 2000u     /* plus received bytes / 5 */
#define NS_PER_CELL_VAR 1u /* compute */

struct mc_synth_gen {
    mc_synth_params p;
    mc_synth_rank_info ri;
    int32_t rank;
    uint64_t step; /* next step to emit */
    uint64_t t;    /* the rank's clock */
    uint64_t rng[4];
    mc_record *halo; /* per-step template; t_end_ns holds the base cost */
    size_t nhalo;
    mc_record *puts; /* MPI_Put template, same convention */
    size_t nputs;
    uint64_t halo_total; /* bytes sent per step, for the wait */
    uint64_t compute_ns;
    uint64_t volume_bytes; /* checkpoint contribution */
    uint64_t a2a_bytes;    /* transpose bytes per peer */
    uint32_t levels;       /* ceil(log2 P), at least 1 */
};

static mc_record make_rec(uint16_t op, uint8_t dir, uint64_t bytes,
                          uint32_t comm, uint32_t comm_size, int32_t peer,
                          int32_t tag, uint64_t cost)
{
    mc_record r;
    memset(&r, 0, sizeof r);
    r.bytes = bytes;
    r.t_end_ns = cost;
    r.comm_id = comm;
    r.comm_size = comm_size;
    r.peer = peer;
    r.tag = tag;
    r.op = op;
    r.dir = dir;
    return r;
}

/* Halo exchange template: all receives are posted first (MPI_Irecv from
 * every neighbour), then all sends (MPI_Isend), as a solver does before
 * MPI_Waitall. The tag is 100 + the sender's direction index, so a send
 * toward direction d matches the receive its neighbour posts for -d. */
static void build_halo(mc_synth_gen *g)
{
    const mc_synth_params *p = &g->p;
    const uint32_t P = (uint32_t)p->ranks;
    size_t n = 0;
    for (int pass = 0; pass < 2; pass++) {
        for (int idx = 0; idx < 27; idx++) {
            int d[3];
            dir_of(idx, d);
            const int32_t nb =
                idx == 13 ? -1 : neighbour(p, g->ri.dims, g->ri.coord, d);
            if (nb < 0)
                continue;
            const uint64_t b =
                halo_bytes(g->ri.cells, p->deck->halo, p->deck->vars, d);
            if (pass == 0) {
                g->halo[n++] = make_rec(MC_OP_Irecv, MC_DIR_RECV, b, 0, P, nb,
                                        100 + (26 - idx), T_IRECV);
            } else {
                g->halo[n++] = make_rec(MC_OP_Isend, MC_DIR_SEND, b, 0, P, nb,
                                        100 + idx, T_ISEND + b / 10);
                g->halo_total += b;
            }
        }
    }
    /* --uneven: refined blocks exchange their six faces with sibling
     * blocks on the same rank, through MPI messages to self. A refined
     * block has half the sub-domain's cells (rounded up) per dimension. */
    uint32_t m[3];
    for (int i = 0; i < 3; i++)
        m[i] = (g->ri.cells[i] + 1) / 2;
    for (uint32_t blk = 0; blk < g->ri.extra_blocks; blk++) {
        for (int f = 0; f < 6; f++) {
            int d[3] = {0, 0, 0};
            d[f / 2] = f % 2 ? 1 : -1;
            const uint64_t b = halo_bytes(m, p->deck->halo, p->deck->vars, d);
            const int32_t tag = (int32_t)(1000u + 6u * blk + (uint32_t)f);
            g->halo[n++] = make_rec(MC_OP_Irecv, MC_DIR_RECV, b, 0, P, g->rank,
                                    tag, T_IRECV);
            g->halo[n++] = make_rec(MC_OP_Isend, MC_DIR_SEND, b, 0, P, g->rank,
                                    tag, T_ISEND + b / 10);
            g->halo_total += b;
        }
    }
    g->nhalo = n;
    /* One-sided decks put the boundary layer of one variable into each face
     * neighbour's window (a window over MPI_COMM_WORLD) in a fence epoch. */
    n = 0;
    if (p->deck->put_every) {
        for (int idx = 0; idx < 27; idx++) {
            int d[3];
            dir_of(idx, d);
            if (abs(d[0]) + abs(d[1]) + abs(d[2]) != 1)
                continue;
            const int32_t nb = neighbour(p, g->ri.dims, g->ri.coord, d);
            if (nb < 0)
                continue;
            const uint64_t b = halo_bytes(g->ri.cells, p->deck->halo, 1, d);
            g->puts[n++] = make_rec(MC_OP_Put, MC_DIR_SEND, b, 0, P, nb,
                                    MC_TAG_NONE, T_PUT + b / 10);
        }
    }
    g->nputs = n;
}

int mc_synth_gen_create(const mc_synth_params *p, int32_t rank,
                        mc_synth_gen **out, mc_errinfo *err)
{
    if (!out)
        return mc_errinfo_set(err, MC_EINVAL, NULL, -1, -1, "no output");
    *out = NULL;
    int rc = mc_synth_check(p, err);
    if (rc)
        return rc;
    if (rank < 0 || rank >= p->ranks)
        return mc_errinfo_set(err, MC_EINVAL, NULL, -1, -1,
                              "rank %ld outside 0..%ld", (long)rank,
                              (long)p->ranks - 1);
    mc_synth_gen *g = calloc(1, sizeof *g);
    if (!g)
        return mc_errinfo_set(err, MC_ENOMEM, NULL, -1, -1, NULL);
    g->p = *p;
    g->rank = rank;
    mc_synth_rank_geometry(p, rank, &g->ri);
    g->halo = malloc((2u * 26u + 12u * g->ri.extra_blocks) * sizeof *g->halo);
    g->puts = malloc(6u * sizeof *g->puts);
    if (!g->halo || !g->puts) {
        mc_synth_gen_free(g);
        return mc_errinfo_set(err, MC_ENOMEM, NULL, -1, -1, NULL);
    }
    build_halo(g);

    const mc_synth_deck *dk = p->deck;
    const uint64_t cells =
        (uint64_t)g->ri.cells[0] * g->ri.cells[1] * g->ri.cells[2];
    g->compute_ns = cells * dk->vars * NS_PER_CELL_VAR;
    g->volume_bytes = cells * dk->vars * 8u;
    /* Transpose: the row's cells spread evenly over px * px blocks, so
     * every member sends the same per-peer count (weak scaling: the local
     * volume / px). At least one double. */
    const uint64_t row_x = p->scaling == MC_SYNTH_WEAK
                               ? (uint64_t)p->local[0] * (uint64_t)g->ri.dims[0]
                               : p->global[0];
    const uint64_t px = (uint64_t)g->ri.dims[0];
    uint64_t per_peer =
        row_x * g->ri.cells[1] * g->ri.cells[2] * dk->vars / (px * px);
    g->a2a_bytes = (per_peer ? per_peer : 1u) * 8u;
    g->levels = ceil_log2((uint64_t)p->ranks);
    if (g->levels == 0)
        g->levels = 1;

    uint64_t s = hash64(p->seed, 0x72616e6b00000000ull ^ (uint64_t)rank);
    for (int i = 0; i < 4; i++)
        g->rng[i] = splitmix64(&s);
    /* MPI_Init and setup take 5 to 6 ms after the epoch. */
    g->t = 5000000u + xoshiro(g->rng) % 1000000u;
    *out = g;
    return 0;
}

void mc_synth_gen_free(mc_synth_gen *g)
{
    if (!g)
        return;
    free(g->halo);
    free(g->puts);
    free(g);
}

size_t mc_synth_gen_max_step(const mc_synth_gen *g)
{
    /* halo + puts + allreduce + bcast + alltoall + gather */
    return g->nhalo + g->nputs + 4u;
}

int mc_synth_gen_done(const mc_synth_gen *g) { return g->step >= g->p.steps; }

/* @v * @r / 2^@shift for r < 1024, without overflow for large @v. */
static uint64_t jitter(uint64_t v, uint64_t r, int shift)
{
    return v < (1ull << 53) ? (v * r) >> shift : (v >> shift) * r;
}

/* Place one call on the rank's clock: a gap of 20..1043 ns, then the cost
 * with 0..25 % jitter. One PRNG draw serves both. */
static void stamp(mc_synth_gen *g, mc_record *r, uint64_t cost)
{
    const uint64_t x = xoshiro(g->rng);
    const uint64_t start = g->t + 20u + (x >> 54);
    const uint64_t end = start + cost + jitter(cost, x & 1023u, 12);
    r->t_start_ns = start;
    r->t_end_ns = end;
    g->t = end;
}

/* A pause of @ns with 0..6 % jitter (compute, waits, fences). */
static void advance(mc_synth_gen *g, uint64_t ns)
{
    const uint64_t x = xoshiro(g->rng);
    g->t += ns + jitter(ns, x & 1023u, 14);
}

static mc_record *coll(mc_synth_gen *g, mc_record *r, uint16_t op,
                       uint64_t bytes, uint32_t comm, uint32_t comm_size,
                       uint64_t cost)
{
    *r = make_rec(op, MC_DIR_NONE, bytes, comm, comm_size, MC_PEER_NONE,
                  MC_TAG_NONE, 0);
    /* Collectives also wait for the slowest member: up to 16 us more. */
    const uint64_t wait = (xoshiro(g->rng) >> 50);
    stamp(g, r, cost + wait);
    return r + 1;
}

static size_t emit_step(mc_synth_gen *g, mc_record *out)
{
    const mc_synth_deck *dk = g->p.deck;
    const uint64_t s = g->step;
    const uint32_t P = (uint32_t)g->p.ranks;
    mc_record *r = out;

    if (s % dk->bcast_every == 0)
        r = coll(g, r, MC_OP_Bcast, dk->bcast_bytes, 0, P,
                 (uint64_t)g->levels * (T_COLL + dk->bcast_bytes / 5u));
    advance(g, g->compute_ns);
    memcpy(r, g->halo, g->nhalo * sizeof *r);
    for (size_t i = 0; i < g->nhalo; i++)
        stamp(g, &r[i], r[i].t_end_ns);
    r += g->nhalo;
    advance(g, T_WAIT + g->halo_total / 5u);
    if (dk->put_every && s % dk->put_every == 0) {
        advance(g, T_FENCE);
        memcpy(r, g->puts, g->nputs * sizeof *r);
        for (size_t i = 0; i < g->nputs; i++)
            stamp(g, &r[i], r[i].t_end_ns);
        r += g->nputs;
        advance(g, T_FENCE);
    }
    r = coll(g, r, MC_OP_Allreduce, dk->allreduce_bytes, 0, P,
             (uint64_t)g->levels * T_COLL);
    if ((s + 1) % dk->transpose_every == 0) {
        const uint64_t peers = (uint64_t)g->ri.row_size - 1u;
        r = coll(g, r, MC_OP_Alltoall, g->a2a_bytes, g->ri.row_comm_id,
                 (uint32_t)g->ri.row_size,
                 T_A2A + peers * (1000u + g->a2a_bytes / 5u));
    }
    if ((s + 1) % dk->checkpoint_every == 0 || s + 1 == g->p.steps) {
        /* Rank 0 receives every contribution; the others send one. */
        const uint64_t in =
            g->rank == 0 ? g->volume_bytes * P : g->volume_bytes;
        r = coll(g, r, g->ri.even_volumes ? MC_OP_Gather : MC_OP_Gatherv,
                 g->volume_bytes, 0, P, T_GATHER + in / 5u);
    }
    g->step++;
    return (size_t)(r - out);
}

size_t mc_synth_gen_fill(mc_synth_gen *g, mc_record *buf, size_t cap)
{
    const size_t need = mc_synth_gen_max_step(g);
    size_t n = 0;
    while (g->step < g->p.steps && cap - n >= need)
        n += emit_step(g, buf + n);
    return n;
}
