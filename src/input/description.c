/* Questions about a description that do not need the schema: the names of control modes and
 * wiring installations, and whether a controller holds a setpoint. */
#include "description.h"

const char *const tp_description_mode_names[TP_MODE_PID + 1] = {"off", "full", "on-off", "pid"};

const char *tp_description_mode_name(tp_mode mode)
{
    return (unsigned)mode < sizeof tp_description_mode_names / sizeof tp_description_mode_names[0]
               ? tp_description_mode_names[mode]
               : "?";
}

const char *const tp_description_installation_names[TP_INSTALL_CHASSIS + 1] = {"cable",
                                                                               "chassis"};

int tp_description_mode_holds(tp_mode mode)
{
    return mode == TP_MODE_ONOFF || mode == TP_MODE_PID;
}

int tp_description_holds(const tp_description *desc)
{
    return desc->control.present && tp_isset(desc->control.setpoint) &&
           tp_description_mode_holds(desc->control.mode);
}
