/* ops.c - the operation table: names, categories, modes, directions. */
#include <msgcensus/ops.h>

#include <string.h> /* strcmp, strncmp */

typedef struct op_entry {
    unsigned code;
    const char *name;
    mc_op_category cat;
    mc_op_mode mode;
    mc_dir dir;
} op_entry;

static const op_entry op_table[] = {
#define MC_OP_ROW(code, name, cat, mode, dir)                                  \
    {code, "MPI_" #name, MC_CAT_##cat, MC_MODE_##mode, MC_DIR_##dir},
    MC_OPS_MAP(MC_OP_ROW)
#undef MC_OP_ROW
};

#define OP_TABLE_LEN (sizeof op_table / sizeof op_table[0])

/* Code -> row by a switch the compiler turns into a jump table: constant,
 * thread-safe (the tap calls this from application threads), no set-up. */
static const op_entry *op_lookup(unsigned code)
{
    switch (code) {
#define MC_OP_CASE(c, name, cat, mode, dir)                                    \
    case c: {                                                                  \
        static const op_entry e = {c, "MPI_" #name, MC_CAT_##cat,              \
                                   MC_MODE_##mode, MC_DIR_##dir};              \
        return &e;                                                             \
    }
        MC_OPS_MAP(MC_OP_CASE)
#undef MC_OP_CASE
    default:
        return NULL;
    }
}

int mc_op_valid(unsigned code) { return op_lookup(code) != NULL; }

const char *mc_op_name(unsigned code)
{
    const op_entry *e = op_lookup(code);
    return e ? e->name : NULL;
}

unsigned mc_op_from_name(const char *name)
{
    if (!name)
        return MC_OP_NONE;
    const char *bare = strncmp(name, "MPI_", 4) == 0 ? name + 4 : name;
    for (unsigned i = 0; i < OP_TABLE_LEN; i++)
        if (strcmp(op_table[i].name + 4, bare) == 0)
            return op_table[i].code;
    return MC_OP_NONE;
}

mc_op_category mc_op_category_of(unsigned code)
{
    const op_entry *e = op_lookup(code);
    return e ? e->cat : MC_CAT_NONE;
}

mc_op_mode mc_op_mode_of(unsigned code)
{
    const op_entry *e = op_lookup(code);
    return e ? e->mode : MC_MODE_BLOCKING;
}

mc_dir mc_op_dir_of(unsigned code)
{
    const op_entry *e = op_lookup(code);
    return e ? e->dir : MC_DIR_NONE;
}

unsigned mc_op_count(void) { return (unsigned)OP_TABLE_LEN; }

unsigned mc_op_at(unsigned i)
{
    return i < OP_TABLE_LEN ? op_table[i].code : 0;
}

const char *mc_category_name(mc_op_category cat)
{
    switch (cat) {
    case MC_CAT_P2P:
        return "p2p";
    case MC_CAT_COLL:
        return "coll";
    case MC_CAT_NEIGHBOR:
        return "neighbor";
    case MC_CAT_ONESIDED:
        return "onesided";
    default:
        return "none";
    }
}
