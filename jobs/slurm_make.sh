#!/bin/bash
# helmix example job script for a Slurm cluster: generate a 1024^3 cube on 4 nodes, then
# refuse to continue unless the cube holds the requested mix. Adapt partition, modules
# and paths to your site; the recipe below is an invented example.
#SBATCH --job-name=helmix-1024
#SBATCH --nodes=4
#SBATCH --ntasks-per-node=32
#SBATCH --time=00:20:00
#SBATCH --output=helmix-%j.log
set -euo pipefail

# module load openmpi fftw hdf5-mpi   # site specific

cat > ic1024.ini <<'INI'
[grid]
cells = 1024
[spectrum]
shape = power
slope = 2.0
kmin = 1
kmax = 16
[mix]
compressive_fraction = 0.5
exact = total
[amplitude]
vrms = 1.0
[random]
seed = 4242
[output]
file = ic1024.h5
precision = single
INI

# Peak memory per rank is about one complex slab: 1024^3 * 8 bytes / ranks (~64 MiB at 128 ranks).
srun helmix make ic1024.ini

# Refuse to go on with a cube that does not hold what was asked (exit status 1 on a failed line).
srun helmix inspect ic1024.h5 --check --json ic1024-check.json --plot ic1024-report.pdf --quiet

# ... start the simulation from ic1024.h5 here ...
