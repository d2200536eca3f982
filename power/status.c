/* Short English phrases for the pw_status codes of power/.
 * See LICENSE. */
#include "power/power.h"

const char *pw_strerror(int status)
{
    switch (status) {
    case PW_OK:
        return "success";
    case PW_EDOM:
        return "argument out of range";
    case PW_ENOCONV:
        return "did not converge";
    case PW_ESING:
        return "singular design (a column is constant or aliased)";
    case PW_ENOMEM:
        return "out of memory";
    case PW_EFEW:
        return "too few observations";
    default:
        return "unknown power/ status";
    }
}
