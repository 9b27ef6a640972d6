#!/bin/bash
# jobs/scaling.sh — a helmix scaling study: time `helmix make` (and optionally `helmix inspect`)
# of an invented benchmark cube over a matrix of cells, ranks and threads, then merge the
# timing files with `helmix scaling` into OUT/scaling.md and OUT/scaling.png.
#
# usage: jobs/scaling.sh MODE [options]
#   MODE (one of):
#     --local              run every point here, one after another, with $MPIEXEC -n P
#                          (default launcher "mpiexec"; e.g. MPIEXEC="mpiexec --allow-run-as-root
#                          --oversubscribe" in a container)
#     --slurm              write one batch script per point from jobs/scaling.slurm.in, submit
#                          each with sbatch, and a last job (afterok on all) that runs helmix scaling
#     --pbs                the same with jobs/scaling.pbs.in and qsub
#     --dry-run            print the matrix and exit
#   options:
#     --cells "N ..."      cells per side (default "64"); weak: the size at the fewest cores
#     --ranks "P ..."      MPI ranks (default "1 2 4")
#     --threads "T ..."    threads per rank (default "1"; OMP_NUM_THREADS, and make --threads)
#     --kind strong|weak   strong (default): every N on every P x T; weak: cells per core held,
#                          N = N0 (cores / fewest cores)^(1/3) rounded to an even size (>= 4)
#     --out DIR            output directory (default scaling-YYYYmmdd-HHMMSS; must not hold a study)
#     --inspect            also time `helmix inspect` of each cube (OUT/scaling_inspect.md|png)
#     --keep               keep the cubes (by default each is removed once timed)
#     --helmix PATH        the executable (default: $HELMIX, else helmix on PATH, else build/helmix)
#     --time HH:MM:SS      wall-time limit of each batch job (default 00:30:00)
#     --ranks-per-node R   PBS: MPI ranks per node (default 32)
#     --submit-args "..."  extra arguments for sbatch / qsub (partition, account, ...)
#     --no-submit          batch modes: write the scripts, print the submit commands, submit nothing
#   environment: MPIEXEC (launcher and its flags; default mpiexec locally, srun under Slurm,
#   mpiexec under PBS), HELMIX.
#
# Layout of OUT: recipes/ (one recipe per cube size), cubes/ (removed unless --keep),
# timings/make_TAG.json and inspect_TAG.json, logs/TAG.log, batch/ (job scripts), scaling.md,
# scaling.png (and scaling_inspect.md|png). TAG = n<N>_p<P>_t<T>.
# Exit status: 0 done (or submitted), 2 bad options, 3 a run failed.
set -euo pipefail

here=$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)
mode="" cells_list="64" ranks_list="1 2 4" threads_list="1" kind="strong" out="" inspect=0 keep=0
helmix="${HELMIX:-}" walltime="00:30:00" rpn=32 submit_args="" submit=1

die() { echo "scaling.sh: error: $*" >&2; exit 2; }
usage() { sed -n '2,/^set -euo/p' "${BASH_SOURCE[0]}" | sed '$d' | sed 's/^# \{0,1\}//'; }

while [ $# -gt 0 ]; do
  case "$1" in
    --local|--slurm|--pbs|--dry-run)
      [ -z "$mode" ] || die "give one of --local, --slurm, --pbs, --dry-run (got $mode and $1)"
      mode=${1#--} ;;
    --cells|--ranks|--threads|--kind|--out|--helmix|--time|--ranks-per-node|--submit-args)
      [ $# -ge 2 ] || die "option $1 needs a value"
      case "$1" in
        --cells) cells_list=$2 ;; --ranks) ranks_list=$2 ;; --threads) threads_list=$2 ;;
        --kind) kind=$2 ;; --out) out=$2 ;; --helmix) helmix=$2 ;; --time) walltime=$2 ;;
        --ranks-per-node) rpn=$2 ;; --submit-args) submit_args=$2 ;;
      esac
      shift ;;
    --inspect) inspect=1 ;;
    --keep) keep=1 ;;
    --no-submit) submit=0 ;;
    -h|--help) usage; exit 0 ;;
    *) die "unknown argument '$1' (see jobs/scaling.sh --help)" ;;
  esac
  shift
done

[ -n "$mode" ] || die "give a mode: --local, --slurm, --pbs or --dry-run (see --help)"
case "$kind" in strong|weak) ;; *) die "--kind $kind: must be strong or weak" ;; esac
is_count() { [[ "$1" =~ ^[1-9][0-9]*$ ]]; }
for n in $cells_list; do is_count "$n" && [ $((n % 2)) -eq 0 ] && [ "$n" -ge 4 ] || die "--cells: $n is not an even size >= 4"; done
for p in $ranks_list; do is_count "$p" || die "--ranks: $p is not a positive integer"; done
for t in $threads_list; do is_count "$t" || die "--threads: $t is not a positive integer"; done
is_count "$rpn" || die "--ranks-per-node: $rpn is not a positive integer"
[ -n "$cells_list" ] && [ -n "$ranks_list" ] && [ -n "$threads_list" ] || die "--cells, --ranks and --threads need at least one value each"

# The matrix: one line "TAG N P T" per point. Weak scaling holds N^3 / cores: N follows the cube
# root of the cores relative to the fewest cores of the matrix, rounded to the nearest even size.
matrix() {
  local cmin=0 n p t c
  for p in $ranks_list; do for t in $threads_list; do
    c=$((p * t)); { [ "$cmin" -eq 0 ] || [ "$c" -lt "$cmin" ]; } && cmin=$c
  done; done
  for n in $cells_list; do for p in $ranks_list; do for t in $threads_list; do
    local size=$n
    if [ "$kind" = weak ]; then
      size=$(awk -v n="$n" -v c="$((p * t))" -v c0="$cmin" \
             'BEGIN { s = 2 * int(n * (c / c0) ^ (1 / 3) / 2 + 0.5); print (s < 4 ? 4 : s) }')
    fi
    echo "n${size}_p${p}_t${t} $size $p $t"
  done; done; done
}

if [ "$mode" = dry-run ]; then
  printf '%-20s %8s %6s %8s %6s %14s\n' tag cells ranks threads cores "cells/core"
  matrix | while read -r tag n p t; do
    printf '%-20s %8s %6s %8s %6s %14.0f\n' "$tag" "$n^3" "$p" "$t" "$((p * t))" "$(awk -v n="$n" -v c="$((p * t))" 'BEGIN { print n ^ 3 / c }')"
  done
  if [ "$inspect" = 1 ]; then echo "($kind scaling; helmix make and helmix inspect at every point)"
  else echo "($kind scaling; helmix make at every point)"; fi
  exit 0
fi

if [ -z "$helmix" ]; then
  if command -v helmix >/dev/null 2>&1; then helmix=$(command -v helmix)
  else helmix="$here/../build/helmix"; fi
fi
[ -x "$helmix" ] || die "no helmix executable at '$helmix' (give --helmix PATH or set HELMIX)"
helmix=$(cd "$(dirname "$helmix")" && pwd)/$(basename "$helmix")
make_threads=""
make_help=$("$helmix" make --help 2>/dev/null || true)
case "$make_help" in *--timings*) ;; *) die "$helmix make has no --timings option (a helmix too old for scaling studies)" ;; esac
case "$make_help" in *--threads*) make_threads=1 ;; esac
[ -n "$out" ] || out="scaling-$(date +%Y%m%d-%H%M%S)"
if [ -e "$out/scaling.md" ] || [ -d "$out/timings" ]; then die "$out already holds a scaling study; choose another --out"; fi
mkdir -p "$out" 2>/dev/null || die "cannot create the output directory $out"
out=$(cd "$out" && pwd)
mkdir -p "$out/recipes" "$out/cubes" "$out/timings" "$out/logs"

# The benchmark cube, an invented scenario: a plain velocity field with a power-law spectrum,
# half compressive, one seed; nothing in it is tuned to be fast or slow.
recipe() { # N -> path of its recipe
  local n=$1 f="$out/recipes/bench_n$1.ini"
  [ -e "$f" ] || cat > "$f" <<INI
# helmix scaling benchmark (an invented test scenario, not a physical setup), ${n}^3 cells
[grid]
cells = $n
[spectrum]
shape = power
slope = 2
kmin = 1
[mix]
zeta = 0.5
[amplitude]
vrms = 1
[random]
seed = 2024
[output]
precision = single
INI
  echo "$f"
}

# Open MPI's mpiexec binds each rank to one core (its default for 2 ranks or fewer), which
# leaves threads nothing to run on: with T > 1 threads a rank gets T cores (--map-by slot:PE=T
# in a batch job) or no binding at all (--bind-to none on one machine, where ranks x threads
# may exceed the cores). A launcher given with its own binding, and srun, are left as they are.
bind_flags() { # mode threads launcher
  [ "$2" -gt 1 ] || return 0
  case "$3" in *--bind-to*|*--map-by*|*srun*) return 0 ;; *mpiexec*|*mpirun*) ;; *) return 0 ;; esac
  if [ "$1" = local ]; then echo " --bind-to none"; else echo " --map-by slot:PE=$2"; fi
}

# The shell commands of one point, the same for every mode; $1 launcher.
point_commands() {
  local launch=$1 tag=$2 n=$3 p=$4 t=$5 rec cube
  launch="$launch$(bind_flags "$mode" "$t" "$launch")"
  rec=$(recipe "$n")
  cube="$out/cubes/$tag.h5"
  local thr=""
  [ -n "$make_threads" ] && thr=" --threads $t"
  echo "export OMP_NUM_THREADS=$t"
  echo "$launch -n $p '$helmix' make '$rec' -o '$cube' --force --quiet$thr --timings '$out/timings/make_$tag.json'"
  [ "$inspect" = 1 ] && echo "$launch -n $p '$helmix' inspect '$cube' --quiet --timings '$out/timings/inspect_$tag.json' > /dev/null"
  [ "$keep" = 1 ] || echo "rm -f '$cube' '$cube.xmf'"
}

summary_commands() {
  echo "cd '$out'"
  echo "'$helmix' scaling timings/make_*.json --kind $kind --table scaling.md --plot scaling.png --quiet"
  [ "$inspect" = 1 ] && echo "'$helmix' scaling timings/inspect_*.json --kind $kind --table scaling_inspect.md --plot scaling_inspect.png --quiet"
  return 0
}

if [ "$mode" = local ]; then
  launch=${MPIEXEC:-mpiexec}
  while read -r tag n p t; do
    echo "scaling.sh: $tag ($n^3 cells, $p ranks x $t threads)"
    if ! bash -euo pipefail -c "$(point_commands "$launch" "$tag" "$n" "$p" "$t")" < /dev/null > "$out/logs/$tag.log" 2>&1; then
      echo "scaling.sh: error: run $tag failed; see $out/logs/$tag.log" >&2
      tail -n 5 "$out/logs/$tag.log" >&2
      exit 3
    fi
  done < <(matrix)
  if ! bash -euo pipefail -c "$(summary_commands)" < /dev/null > "$out/logs/scaling.log" 2>&1; then
    echo "scaling.sh: error: helmix scaling failed; see $out/logs/scaling.log" >&2
    cat "$out/logs/scaling.log" >&2
    exit 3
  fi
  echo "scaling.sh: $out/scaling.md, $out/scaling.png"
  exit 0
fi

# Batch modes: fill the template's placeholders, one script per point, then the summary job.
template="$here/scaling.$mode.in"
[ -r "$template" ] || die "missing template $template"
mkdir -p "$out/batch"
fill() { # name ranks threads nodes commands-file -> script on stdout
  local name=$1 p=$2 t=$3 nodes=$4 body=$5 per=$(( $2 < rpn ? $2 : rpn ))
  awk -v name="$name" -v p="$p" -v t="$t" -v nodes="$nodes" -v per="$per" -v cpn="$((per * t))" \
      -v wall="$walltime" -v logf="$out/logs/$name.log" -v dir="$out" -v body="$body" '
    /@COMMANDS@/ { while ((getline line < body) > 0) print line; close(body); next }
    { gsub(/@NAME@/, name); gsub(/@RANKS@/, p); gsub(/@THREADS@/, t); gsub(/@NODES@/, nodes);
      gsub(/@RANKS_PER_NODE@/, per); gsub(/@CPUS_PER_NODE@/, cpn); gsub(/@TIME@/, wall);
      gsub(/@LOG@/, logf); gsub(/@OUTDIR@/, dir); print }' "$template"
}
if [ "$mode" = slurm ]; then launch=${MPIEXEC:-srun}; submitter=sbatch; else launch=${MPIEXEC:-mpiexec}; submitter=qsub; fi
ids=()
while read -r tag n p t; do
  point_commands "$launch" "$tag" "$n" "$p" "$t" > "$out/batch/$tag.commands"
  fill "$tag" "$p" "$t" "$(( (p + rpn - 1) / rpn ))" "$out/batch/$tag.commands" > "$out/batch/$tag.$mode"
  rm -f "$out/batch/$tag.commands"
  if [ "$submit" = 1 ]; then
    # shellcheck disable=SC2086  # submit_args holds several arguments on purpose
    if [ "$mode" = slurm ]; then id=$(sbatch --parsable $submit_args "$out/batch/$tag.$mode") || exit 3; id=${id%%;*}
    else id=$(qsub $submit_args "$out/batch/$tag.$mode") || exit 3; fi
    ids+=("$id")
    echo "scaling.sh: submitted $tag as $id"
  else
    echo "$submitter $submit_args $out/batch/$tag.$mode"
  fi
done < <(matrix)
summary_commands > "$out/batch/summary.commands"
fill "summary" 1 1 1 "$out/batch/summary.commands" > "$out/batch/summary.$mode"
rm -f "$out/batch/summary.commands"
deps=$(IFS=:; echo "${ids[*]:-}")
if [ "$submit" = 1 ]; then
  # shellcheck disable=SC2086
  if [ "$mode" = slurm ]; then id=$(sbatch --parsable $submit_args --dependency="afterok:$deps" "$out/batch/summary.$mode") || exit 3
  else id=$(qsub $submit_args -W depend="afterok:$deps" "$out/batch/summary.$mode") || exit 3; fi
  echo "scaling.sh: submitted the summary as ${id%%;*} (after $deps); it writes $out/scaling.md and $out/scaling.png"
else
  if [ "$mode" = slurm ]; then echo "sbatch $submit_args --dependency=afterok:<the ids above> $out/batch/summary.$mode"
  else echo "qsub $submit_args -W depend=afterok:<the ids above> $out/batch/summary.$mode"; fi
fi
