/* ops.h - the MPI operations a trace record can name, with their category. */
#ifndef MSGCENSUS_OPS_H
#define MSGCENSUS_OPS_H

#include <stdint.h> /* uint16_t */

#include "common.h"

/* The operation table: X(code, name, category, mode, direction).
 *   code      stable on-disk value (u16); never renumber or reuse a code.
 *   name      the MPI-4 standard's name without its "MPI_" prefix.
 *   category  P2P, COLL (blocking, nonblocking and persistent collectives),
 *             NEIGHBOR (neighbourhood collectives) or ONESIDED.
 *   mode      BLOCKING, NONBLOCKING, PERSISTENT, PARTITIONED. For one-sided
 *             operations BLOCKING means "no request handle" (MPI_Put), and
 *             NONBLOCKING the request-based forms (MPI_Rput).
 *   direction the record direction the operation normally carries: SEND,
 *             RECV, BOTH (the writer emits one send and one receive record,
 *             e.g. MPI_Sendrecv) or NONE (collectives).
 * Gaps in the numbering leave room for later minor versions. */
#define MC_OPS_MAP(X)                                                          \
    X(1, Send, P2P, BLOCKING, SEND)                                            \
    X(2, Bsend, P2P, BLOCKING, SEND)                                           \
    X(3, Ssend, P2P, BLOCKING, SEND)                                           \
    X(4, Rsend, P2P, BLOCKING, SEND)                                           \
    X(5, Isend, P2P, NONBLOCKING, SEND)                                        \
    X(6, Ibsend, P2P, NONBLOCKING, SEND)                                       \
    X(7, Issend, P2P, NONBLOCKING, SEND)                                       \
    X(8, Irsend, P2P, NONBLOCKING, SEND)                                       \
    X(9, Recv, P2P, BLOCKING, RECV)                                            \
    X(10, Irecv, P2P, NONBLOCKING, RECV)                                       \
    X(11, Mrecv, P2P, BLOCKING, RECV)                                          \
    X(12, Imrecv, P2P, NONBLOCKING, RECV)                                      \
    X(13, Sendrecv, P2P, BLOCKING, BOTH)                                       \
    X(14, Sendrecv_replace, P2P, BLOCKING, BOTH)                               \
    X(15, Isendrecv, P2P, NONBLOCKING, BOTH)                                   \
    X(16, Isendrecv_replace, P2P, NONBLOCKING, BOTH)                           \
    X(17, Send_init, P2P, PERSISTENT, SEND)                                    \
    X(18, Bsend_init, P2P, PERSISTENT, SEND)                                   \
    X(19, Ssend_init, P2P, PERSISTENT, SEND)                                   \
    X(20, Rsend_init, P2P, PERSISTENT, SEND)                                   \
    X(21, Recv_init, P2P, PERSISTENT, RECV)                                    \
    X(22, Psend_init, P2P, PARTITIONED, SEND)                                  \
    X(23, Precv_init, P2P, PARTITIONED, RECV)                                  \
    X(100, Barrier, COLL, BLOCKING, NONE)                                      \
    X(101, Bcast, COLL, BLOCKING, NONE)                                        \
    X(102, Gather, COLL, BLOCKING, NONE)                                       \
    X(103, Gatherv, COLL, BLOCKING, NONE)                                      \
    X(104, Scatter, COLL, BLOCKING, NONE)                                      \
    X(105, Scatterv, COLL, BLOCKING, NONE)                                     \
    X(106, Allgather, COLL, BLOCKING, NONE)                                    \
    X(107, Allgatherv, COLL, BLOCKING, NONE)                                   \
    X(108, Alltoall, COLL, BLOCKING, NONE)                                     \
    X(109, Alltoallv, COLL, BLOCKING, NONE)                                    \
    X(110, Alltoallw, COLL, BLOCKING, NONE)                                    \
    X(111, Reduce, COLL, BLOCKING, NONE)                                       \
    X(112, Allreduce, COLL, BLOCKING, NONE)                                    \
    X(113, Reduce_scatter, COLL, BLOCKING, NONE)                               \
    X(114, Reduce_scatter_block, COLL, BLOCKING, NONE)                         \
    X(115, Scan, COLL, BLOCKING, NONE)                                         \
    X(116, Exscan, COLL, BLOCKING, NONE)                                       \
    X(130, Ibarrier, COLL, NONBLOCKING, NONE)                                  \
    X(131, Ibcast, COLL, NONBLOCKING, NONE)                                    \
    X(132, Igather, COLL, NONBLOCKING, NONE)                                   \
    X(133, Igatherv, COLL, NONBLOCKING, NONE)                                  \
    X(134, Iscatter, COLL, NONBLOCKING, NONE)                                  \
    X(135, Iscatterv, COLL, NONBLOCKING, NONE)                                 \
    X(136, Iallgather, COLL, NONBLOCKING, NONE)                                \
    X(137, Iallgatherv, COLL, NONBLOCKING, NONE)                               \
    X(138, Ialltoall, COLL, NONBLOCKING, NONE)                                 \
    X(139, Ialltoallv, COLL, NONBLOCKING, NONE)                                \
    X(140, Ialltoallw, COLL, NONBLOCKING, NONE)                                \
    X(141, Ireduce, COLL, NONBLOCKING, NONE)                                   \
    X(142, Iallreduce, COLL, NONBLOCKING, NONE)                                \
    X(143, Ireduce_scatter, COLL, NONBLOCKING, NONE)                           \
    X(144, Ireduce_scatter_block, COLL, NONBLOCKING, NONE)                     \
    X(145, Iscan, COLL, NONBLOCKING, NONE)                                     \
    X(146, Iexscan, COLL, NONBLOCKING, NONE)                                   \
    X(160, Barrier_init, COLL, PERSISTENT, NONE)                               \
    X(161, Bcast_init, COLL, PERSISTENT, NONE)                                 \
    X(162, Gather_init, COLL, PERSISTENT, NONE)                                \
    X(163, Gatherv_init, COLL, PERSISTENT, NONE)                               \
    X(164, Scatter_init, COLL, PERSISTENT, NONE)                               \
    X(165, Scatterv_init, COLL, PERSISTENT, NONE)                              \
    X(166, Allgather_init, COLL, PERSISTENT, NONE)                             \
    X(167, Allgatherv_init, COLL, PERSISTENT, NONE)                            \
    X(168, Alltoall_init, COLL, PERSISTENT, NONE)                              \
    X(169, Alltoallv_init, COLL, PERSISTENT, NONE)                             \
    X(170, Alltoallw_init, COLL, PERSISTENT, NONE)                             \
    X(171, Reduce_init, COLL, PERSISTENT, NONE)                                \
    X(172, Allreduce_init, COLL, PERSISTENT, NONE)                             \
    X(173, Reduce_scatter_init, COLL, PERSISTENT, NONE)                        \
    X(174, Reduce_scatter_block_init, COLL, PERSISTENT, NONE)                  \
    X(175, Scan_init, COLL, PERSISTENT, NONE)                                  \
    X(176, Exscan_init, COLL, PERSISTENT, NONE)                                \
    X(200, Neighbor_allgather, NEIGHBOR, BLOCKING, NONE)                       \
    X(201, Neighbor_allgatherv, NEIGHBOR, BLOCKING, NONE)                      \
    X(202, Neighbor_alltoall, NEIGHBOR, BLOCKING, NONE)                        \
    X(203, Neighbor_alltoallv, NEIGHBOR, BLOCKING, NONE)                       \
    X(204, Neighbor_alltoallw, NEIGHBOR, BLOCKING, NONE)                       \
    X(210, Ineighbor_allgather, NEIGHBOR, NONBLOCKING, NONE)                   \
    X(211, Ineighbor_allgatherv, NEIGHBOR, NONBLOCKING, NONE)                  \
    X(212, Ineighbor_alltoall, NEIGHBOR, NONBLOCKING, NONE)                    \
    X(213, Ineighbor_alltoallv, NEIGHBOR, NONBLOCKING, NONE)                   \
    X(214, Ineighbor_alltoallw, NEIGHBOR, NONBLOCKING, NONE)                   \
    X(220, Neighbor_allgather_init, NEIGHBOR, PERSISTENT, NONE)                \
    X(221, Neighbor_allgatherv_init, NEIGHBOR, PERSISTENT, NONE)               \
    X(222, Neighbor_alltoall_init, NEIGHBOR, PERSISTENT, NONE)                 \
    X(223, Neighbor_alltoallv_init, NEIGHBOR, PERSISTENT, NONE)                \
    X(224, Neighbor_alltoallw_init, NEIGHBOR, PERSISTENT, NONE)                \
    X(300, Put, ONESIDED, BLOCKING, SEND)                                      \
    X(301, Get, ONESIDED, BLOCKING, RECV)                                      \
    X(302, Accumulate, ONESIDED, BLOCKING, SEND)                               \
    X(303, Get_accumulate, ONESIDED, BLOCKING, BOTH)                           \
    X(304, Fetch_and_op, ONESIDED, BLOCKING, BOTH)                             \
    X(305, Compare_and_swap, ONESIDED, BLOCKING, BOTH)                         \
    X(306, Rput, ONESIDED, NONBLOCKING, SEND)                                  \
    X(307, Rget, ONESIDED, NONBLOCKING, RECV)                                  \
    X(308, Raccumulate, ONESIDED, NONBLOCKING, SEND)                           \
    X(309, Rget_accumulate, ONESIDED, NONBLOCKING, BOTH)

typedef enum mc_op {
    MC_OP_NONE = 0,
#define MC_OP_ENUM(code, name, cat, mode, dir) MC_OP_##name = (code),
    MC_OPS_MAP(MC_OP_ENUM)
#undef MC_OP_ENUM
        MC_OP_MAX_CODE = 309
} mc_op;

typedef enum mc_op_category {
    MC_CAT_NONE = 0,
    MC_CAT_P2P = 1,
    MC_CAT_COLL = 2,
    MC_CAT_NEIGHBOR = 3,
    MC_CAT_ONESIDED = 4
} mc_op_category;

typedef enum mc_op_mode {
    MC_MODE_BLOCKING = 0,
    MC_MODE_NONBLOCKING = 1,
    MC_MODE_PERSISTENT = 2,
    MC_MODE_PARTITIONED = 3
} mc_op_mode;

/* Record direction (mc_record.dir). */
typedef enum mc_dir {
    MC_DIR_NONE = 0,
    MC_DIR_SEND = 1,
    MC_DIR_RECV = 2,
    MC_DIR_BOTH = 3 /* only in the operation table, never in a record */
} mc_dir;

/*! mc_op_valid() : @return 1 if @code names an operation of the table, else 0.
 */
MC_API int mc_op_valid(unsigned code);

/*! mc_op_name() : @return "MPI_Isend" for MC_OP_Isend; NULL for unknown codes.
 */
MC_API const char *mc_op_name(unsigned code);

/*! mc_op_from_name() :
 *  Accepts "MPI_Isend" or "Isend" (case-sensitive, as in the standard).
 *  @return the code, or MC_OP_NONE (0) if the name is unknown. */
MC_API unsigned mc_op_from_name(const char *name);

/*! mc_op_category() : @return the category; MC_CAT_NONE for unknown codes. */
MC_API mc_op_category mc_op_category_of(unsigned code);

/*! mc_op_mode() : @return the mode; MC_MODE_BLOCKING for unknown codes. */
MC_API mc_op_mode mc_op_mode_of(unsigned code);

/*! mc_op_dir() : @return the table's direction; MC_DIR_NONE for unknown codes.
 */
MC_API mc_dir mc_op_dir_of(unsigned code);

/*! mc_op_count() : @return the number of operations in the table. */
MC_API unsigned mc_op_count(void);

/*! mc_op_at() : @return the code of the i-th table entry (0 <= i < count). */
MC_API unsigned mc_op_at(unsigned i);

/*! mc_category_name() : @return "p2p", "coll", "neighbor", "onesided", "none".
 */
MC_API const char *mc_category_name(mc_op_category cat);

#endif /* MSGCENSUS_OPS_H */
