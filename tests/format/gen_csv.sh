#!/bin/bash
# gen_csv.sh RANK SIZE N - print a CSV trace of N records of an invented 3-D halo-exchange solver (six neighbours, then an allreduce).
rank=$1 size=$2 n=$3
printf '# a 3-D halo exchange on %d ranks, rank %d\n# app_rank=%d\n# app_size=%d\n# host=cn%03d\n# clock_res_ps=1000\n# created_unix_ns=1700000000000000000\n# epoch_unix_ns=1700000000000000000\n' "$size" "$rank" "$rank" "$size" "$rank"
echo "op,dir,peer,bytes,comm_id,comm_size,tag,t_start_ns,t_end_ns,flags"
awk -v r="$rank" -v s="$size" -v n="$n" 'BEGIN {
  t = 1000;
  for (i = 0; i < n; i++) {
    k = i % 7;
    if (k == 6) {
      printf "MPI_Allreduce,none,-1,8,0,%d,-1,%d,%d,0\n", s, t, t + 900;
    } else {
      peer = (r + 1 + k) % s;
      bytes = 8 * 64 * 64 * (1 + k % 3);
      if (k % 2 == 0)
        printf "MPI_Isend,send,%d,%d,0,%d,%d,%d,%d,0\n", peer, bytes, s, k, t, t + 40;
      else
        printf "MPI_Irecv,recv,%d,%d,0,%d,%d,%d,%d,%d\n", peer, bytes, s, k, t, t + 55, (i % 5 == 0) ? 1 : 0;
    }
    t += 1000 + (i * 37) % 500;
  }
}'
