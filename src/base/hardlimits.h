/* Every numeric limit on what tepid reads and runs, in one place (docs/limits.md lists each with
 * where it is checked, its message and its bad-input case). Each limit is checked in one place,
 * before the memory or time it bounds is spent. Hard limits: fixed at build time, no key or
 * option raises them. The file is not called limits.h, which would shadow the C library's
 * <limits.h> on the include path. */
#ifndef TP_HARDLIMITS_H
#define TP_HARDLIMITS_H

/* ---- a file (yamltree.c) --------------------------------------------------------------------- */
#define TP_YAMLTREE_MAX_BYTES (1024 * 1024) /* largest config file read, bytes */
#define TP_YAMLTREE_MAX_NODES 200000        /* nodes after alias expansion */
#define TP_YAMLTREE_MAX_DEPTH 64            /* nesting of maps and sequences */

/* ---- the description (config.c, plate.c) -------------------------------------------------- */
#define TP_MAX_LAYERS 16        /* layers in a bed */
#define TP_MAX_RAW_NODES 100000 /* nodes (and sources) in a raw network */
#define TP_MAX_RAW_LINKS 400000 /* links in a raw network */
#define TP_MAX_MATERIALS 256    /* materials defined in one file */
#define TP_GRID_SIDE_MAX 500    /* cells along one side of bed.grid */
#define TP_SCHEDULE_MAX 64      /* segments in control.schedule */

/* ---- a run: checked on the description's run: section (config.c) and on a measured log's
 * span (fit.c) when they are read, and on the run itself (integrate.c) where only the network
 * knows the size ---------------------------------------------------------------------------- */
#define TP_MAX_DURATION (30 * 86400.0) /* s, longest model run: run.duration, or the span of a
                                          measured log that fit reproduces */
#define TP_MAX_OUTPUT_ROWS 5000000.0   /* output times in one run, run.duration / run.step + 1
                                          (30 days at 1 s fits) */
#define TP_MAX_TICKS 10000000.0        /* controller samples in one run, run.duration /
                                          control.period */
#define TP_COOLDOWN_HORIZON 86400.0   /* s, the longest cool-down tepid cool follows (the run
                                          stops earlier once everything is below every level) */
#define TP_MAX_OUTPUT_VALUES 5.0e7     /* output rows times (nodes + sources): bounds the history
                                          a caller keeps (about 8 bytes each), values */

/* ---- a measured log (templog.c) ----------------------------------------------------------- */
#define TP_TEMPLOG_MAX_ROWS 1000000              /* data rows accepted in one log (checked first) */
#define TP_TEMPLOG_MAX_BYTES (64L * 1024 * 1024) /* largest log file read, bytes */
#define TP_TEMPLOG_MAX_COLS 64                   /* columns in one log */
#define TP_TEMPLOG_LINE_MAX 4096                 /* longest line, bytes */

/* ---- the command line (cli.c, session.c, cmd_sweep.c, outfile.c) --------------------------- */
#define TP_CLI_MAX_ARGS 256        /* option occurrences on one command line */
#define TP_MAX_SETS 128            /* --set options on one command line */
#define TP_SWEEP_MAX_POINTS 200000 /* grid points or samples in one sweep (~790 B each with the segment metrics) */
#define TP_SWEEP_MAX_JOBS 256      /* worker threads of a sweep */
#define TP_PATH_MAX 4096           /* longest output path accepted, bytes */
#define TP_REPORT_SVG_MAX (64L * 1024 * 1024) /* largest figure a report reads back, bytes */
#define TP_SWEEP_MAX_AXES 2        /* --vary parameters in one sweep grid */
#define TP_SWEEP_MAX_PARAMS 16     /* --spread parameters in one sweep */
#define TP_SWEEP_SHARD_MAX_BYTES (512L * 1024 * 1024) /* largest shard file --merge reads */
#define TP_FIT_MAX_PARAMS 8        /* free parameters in one fit */
#define TP_FIT_FREE_MAX 32         /* --free options on one command line */
#define TP_FIT_STARTS_MAX 20       /* most starting points of a fit */
#define TP_SIZE_SUPPLIES_MAX 8     /* supply voltages in one size --supply list */
#define TP_SIZE_SCALE_MAX 100.0    /* size: largest heater power considered, as a multiple of
                                      the configured one (when no tighter limit applies) */
#define TP_PROGRAM_MAX_ABOVE 16    /* warmup --above levels on one command line */
#define TP_COOLDOWN_MAX_TO 16      /* cool --to levels on one command line */

#endif
