#!/usr/bin/env bash
# Template of a solver wrapper for runfold-job.sh: adapt the three marked steps to your solver. It runs inside the
# run's folder, where factors.env and factors.json hold the run's factor values, and must leave its results in
# $RUNFOLD_RESULTS (see results.example.txt). A non-zero exit marks the run failed with the end of its log.
set -euo pipefail
source ./factors.env          # fin_height=42.5, fin_thickness=1.2, fin_count=24, base_thickness=6, air_velocity=3.5

# 1. Make the case from a template input deck (here: placeholders like @fin_height@ replaced by the values).
case_template="${CASE_TEMPLATE:-$SLURM_SUBMIT_DIR/heatsink-case}"
cp -r "$case_template" case
for name in fin_height fin_thickness fin_count base_thickness air_velocity; do
    grep -rl "@$name@" case | xargs -r sed -i "s/@$name@/${!name}/g"
done

# 2. Mesh and solve (your solver's commands; srun uses the cores Slurm gave this task).
cd case
./Allmesh
srun --ntasks="${SLURM_CPUS_PER_TASK:-1}" ./Allsolve
cd ..

# 3. Pick the responses out of the solver's report and write the results file.
report=case/postProcessing/summary.dat
{
    echo "thermal_resistance = $(awk '/^thermal_resistance/ {print $2}' "$report")"
    echo "pressure_drop = $(awk '/^pressure_drop/ {print $2}' "$report")"
    echo "mass = $(awk '/^mass/ {print $2}' "$report")"
} >"$RUNFOLD_RESULTS"
