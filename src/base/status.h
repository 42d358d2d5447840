/* Status codes shared by every module, and their messages. */
#ifndef TP_STATUS_H
#define TP_STATUS_H

typedef enum tp_status {
    TP_OK = 0,          /* success */
    TP_ERR_USAGE,       /* bad command line: unknown option, missing argument */
    TP_ERR_CONFIG,      /* the input file or an override is invalid; diagnostics say where */
    TP_ERR_SOLVER,      /* CVODE, KINSOL or the fitter failed, or the question has no answer */
    TP_ERR_IO,          /* a file could not be read or written */
    TP_ERR_NOMEM,       /* an allocation failed */
    TP_ERR_LIMIT,       /* a documented resource bound would be exceeded */
    TP_ERR_STRICT       /* a --strict check failed */
} tp_status;

/* Process exit codes of the command line (docs/user-guide.md). */
enum {
    TP_EXIT_OK = 0,     /* success */
    TP_EXIT_FAILED = 1, /* the computation failed, with the reason */
    TP_EXIT_INPUT = 2,  /* usage or input error */
    TP_EXIT_STRICT = 3  /* a --strict check failed */
};

/* A short English description of a status; never NULL. */
const char *tp_status_message(tp_status status);

/* The process exit code for a status. */
int tp_status_exit_code(tp_status status);

#endif
