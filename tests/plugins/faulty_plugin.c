/* SPDX-License-Identifier: MIT */
/* Model plugins with one defect each, for the loader's error tests; the defect
 * is chosen at compile time by SIGMATUBE_TEST_FAULT (tests/CMakeLists.txt).
 * The dynamics are a damped point on a line, x' = v, v' = −c·v + a. */
#include <math.h>

#include <sigmatube/model_plugin.h>

#define FAULT_NONE 0
#define FAULT_ABI 1          /* built for another ABI version */
#define FAULT_DUPLICATE 2    /* a name used twice */
#define FAULT_BAD_NAME 3     /* a name that is not an identifier */
#define FAULT_NULL_RHS 4     /* no right-hand side */
#define FAULT_NAN 5          /* NaN in every lane whose parameter c is negative */
#define FAULT_NO_ENTRY 6     /* does not export sigmatube_model_v1 */

#ifndef SIGMATUBE_TEST_FAULT
#define SIGMATUBE_TEST_FAULT FAULT_NONE
#endif

#if SIGMATUBE_TEST_FAULT == FAULT_DUPLICATE
static const char* const state_names[] = {"x", "x"};
#elif SIGMATUBE_TEST_FAULT == FAULT_BAD_NAME
static const char* const state_names[] = {"x", "v-dot"};
#else
static const char* const state_names[] = {"x", "v"};
#endif
static const char* const input_names[] = {"a"};
static const char* const parameter_names[] = {"c"};
static const double parameter_defaults[] = {0.1};

static void line_rhs(double t, int lanes, const double* x, const double* u, const double* p, double* dxdt, void* user) {
  (void)t;
  (void)user;
  for (int l = 0; l < lanes; ++l) {
    dxdt[l] = x[lanes + l];
    dxdt[lanes + l] = -p[l] * x[lanes + l] + u[l];
#if SIGMATUBE_TEST_FAULT == FAULT_NAN
    if (p[l] < 0.0) dxdt[lanes + l] = NAN;
#endif
  }
}

static const sigmatube_model line_model = {
#if SIGMATUBE_TEST_FAULT == FAULT_ABI
    SIGMATUBE_MODEL_ABI_VERSION + 1,
#else
    SIGMATUBE_MODEL_ABI_VERSION,
#endif
    2, 1, 1, state_names, input_names, parameter_names, parameter_defaults,
#if SIGMATUBE_TEST_FAULT == FAULT_NULL_RHS
    0,
#else
    line_rhs,
#endif
    0};

#if SIGMATUBE_TEST_FAULT == FAULT_NO_ENTRY
SIGMATUBE_MODEL_EXPORT const sigmatube_model* another_name(void) { return &line_model; }
#else
const sigmatube_model* sigmatube_model_v1(void) { return &line_model; }
#endif
