// Package survey runs one workflow over many targets: a target table gives each target an
// id and the attribute values that differ from the workflow file (its light curve, its
// star's catalogue row, its density), and each target runs as the workflow with those
// values set, exactly as `dipline run --set` sets them, so every target's results record
// what was replaced. Each target keeps its own store shard and results folder, so targets
// can run anywhere at once — on this machine within the worker budget, or as the tasks of a
// Slurm job array — and never contend for one database. A merge gathers the shards into the
// workflow's own store (the same key must hold the same bytes, or the conflict is reported)
// and writes the survey table: one row per target with its status, the step key of every
// step and every figure.
//
// Everything lives under one folder beside the workflow, surveys/<table name>/:
//
//	shards/<id>.db          the target's store
//	targets/<id>/           its results.json, report and data files, and state.json
//	slurm/                  the job scripts, the submitted jobs and the tasks' output
//	survey.csv              the survey table, written by a merge
//
// A target's state.json says whether its run finished every step, failed, or is under way;
// the survey's progress and a re-submission are read from these files, not from Slurm's
// accounting, which a small cluster may not keep.
//
// The package knows no astronomy: it drives the workflow engine.
package survey
