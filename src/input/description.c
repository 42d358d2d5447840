/* Questions about a description that do not need the schema: the names of control modes and
 * wiring installations, whether a controller holds a setpoint, and
 * which. */
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

double tp_description_setpoint(const tp_description *desc)
{
    const tp_control_spec *c = &desc->control;
    double peak = TP_UNSET;
    size_t i;
    if (tp_isset(c->setpoint) || c->n_schedule == 0)
        return c->setpoint;
    for (i = 0; i < c->n_schedule; i++)
        if (tp_isset(c->schedule[i].to) && !(c->schedule[i].to <= peak))
            peak = c->schedule[i].to;
    return peak;
}

int tp_description_holds(const tp_description *desc)
{
    return desc->control.present && tp_isset(tp_description_setpoint(desc)) &&
           tp_description_mode_holds(desc->control.mode);
}
