/* SPDX-License-Identifier: MIT */
/* An example model plugin: the Hill–Clohessy–Wiltshire relative motion near a
 * circular orbit (Clohessy & Wiltshire, J. Aerospace Sci. 27(9), 1960), the same
 * dynamics as the built-in "hill-clohessy-wiltshire", written as a plain C
 * shared library against sigmatube/model_plugin.h:
 *     x'' = 3n²x + 2n y' + ax,   y'' = −2n x' + ay,   z'' = −n²z + az.
 * The loop runs over lanes (independent runs) with unit stride, so the compiler
 * vectorizes it. Build: see CMakeLists.txt beside this file. */
#include <sigmatube/model_plugin.h>

static const char* const state_names[] = {"x", "y", "z", "vx", "vy", "vz"};
static const char* const input_names[] = {"ax", "ay", "az"};
static const char* const parameter_names[] = {"mean_motion"};
static const double parameter_defaults[] = {0.00113}; /* rad/s, roughly a 400 km circular orbit */

static void hcw_rhs(double t, int lanes, const double* x, const double* u, const double* p, double* dxdt,
                    void* user) {
  (void)t;
  (void)user;
  const int L = lanes;
  for (int l = 0; l < L; ++l) {
    const double n = p[l];
    dxdt[0 * L + l] = x[3 * L + l];
    dxdt[1 * L + l] = x[4 * L + l];
    dxdt[2 * L + l] = x[5 * L + l];
    dxdt[3 * L + l] = 3.0 * n * n * x[0 * L + l] + 2.0 * n * x[4 * L + l] + u[0 * L + l];
    dxdt[4 * L + l] = -2.0 * n * x[3 * L + l] + u[1 * L + l];
    dxdt[5 * L + l] = -n * n * x[2 * L + l] + u[2 * L + l];
  }
}

static const sigmatube_model hcw_model = {
    SIGMATUBE_MODEL_ABI_VERSION, 6, 3, 1, state_names, input_names, parameter_names, parameter_defaults,
    hcw_rhs, 0};

const sigmatube_model* sigmatube_model_v1(void) { return &hcw_model; }
