/* Status codes: messages and the mapping to process exit codes. */
#include "status.h"

const char *tp_status_message(tp_status status)
{
    switch (status) {
    case TP_OK: return "success";
    case TP_ERR_USAGE: return "usage error";
    case TP_ERR_CONFIG: return "invalid input";
    case TP_ERR_SOLVER: return "the computation failed";
    case TP_ERR_IO: return "input/output error";
    case TP_ERR_NOMEM: return "out of memory";
    case TP_ERR_LIMIT: return "a resource limit would be exceeded";
    case TP_ERR_STRICT: return "a strict check failed";
    }
    return "unknown status";
}

int tp_status_exit_code(tp_status status)
{
    switch (status) {
    case TP_OK: return TP_EXIT_OK;
    case TP_ERR_USAGE:
    case TP_ERR_CONFIG:
    case TP_ERR_LIMIT: return TP_EXIT_INPUT;
    case TP_ERR_STRICT: return TP_EXIT_STRICT;
    case TP_ERR_SOLVER:
    case TP_ERR_IO:
    case TP_ERR_NOMEM: return TP_EXIT_FAILED;
    }
    return TP_EXIT_FAILED;
}
