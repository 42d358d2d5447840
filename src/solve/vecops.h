/* Compiled vector operations for SUNDIALS serial vectors, used by the solvers of large
 * networks (solver support: only the CVODE driver and the KINSOL steady-state solver include
 * it, so that SUNDIALS types stay in the solve files). */
#ifndef TP_VECOPS_H
#define TP_VECOPS_H

#include <nvector/nvector_serial.h>

/* Give the serial vector `v` compiled operations with the same element-wise definitions as the
 * library's (the distribution's SUNDIALS may be built without optimisation). Clones of `v`
 * share them. */
void tp_vecops_install(N_Vector v);

#endif
