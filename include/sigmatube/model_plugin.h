/* SPDX-License-Identifier: MIT */
/* The C interface of a model plugin: a shared library that brings its own
 * dynamics  dx/dt = f(t, x, u, p)  to sigmatube. A case names the library with
 *
 *     [model]
 *     plugin = "path/to/libmymodel.so"   # relative to the case file
 *     parameters = { mass = 2.0 }        # optional overrides of the defaults
 *
 * The library exports one function, sigmatube_model_v1, returning a pointer to
 * a description that stays valid until the library is unloaded. Everything is
 * plain C so that any compiler (C, C++, Fortran with bind(C), ...) can provide it.
 *
 * Arrays are in structure-of-arrays order over `lanes` independent runs: the
 * value of state i in lane l is x[i*lanes + l]; u, p and dxdt alike. A plugin
 * may therefore vectorize across runs. One-run calls pass lanes = 1.
 *
 * rhs must be safe to call from several threads at once (different x, u, p,
 * dxdt; the same `user`), must not keep the pointers, and signals a failure by
 * writing a non-finite value (NaN): that run is then reported as a numerical
 * failure of the model, not as a crash. */
#ifndef SIGMATUBE_MODEL_PLUGIN_H
#define SIGMATUBE_MODEL_PLUGIN_H

#ifdef __cplusplus
extern "C" {
#endif

#define SIGMATUBE_MODEL_ABI_VERSION 1

typedef struct sigmatube_model {
  int abi_version; /* SIGMATUBE_MODEL_ABI_VERSION the plugin was built against */
  int n_states, n_inputs, n_parameters;
  const char* const* state_names;     /* n_states names (identifiers) */
  const char* const* input_names;     /* n_inputs names */
  const char* const* parameter_names; /* n_parameters names */
  const double* parameter_defaults;   /* n_parameters values */
  void (*rhs)(double t, int lanes, const double* x, const double* u, const double* p, double* dxdt, void* user);
  void* user; /* passed back to rhs unchanged */
} sigmatube_model;

/* The one symbol a plugin exports. */
typedef const sigmatube_model* (*sigmatube_model_entry)(void);
#define SIGMATUBE_MODEL_ENTRY_NAME "sigmatube_model_v1"

#if defined(_WIN32)
#define SIGMATUBE_MODEL_EXPORT __declspec(dllexport)
#else
#define SIGMATUBE_MODEL_EXPORT __attribute__((visibility("default")))
#endif

SIGMATUBE_MODEL_EXPORT const sigmatube_model* sigmatube_model_v1(void);

#ifdef __cplusplus
}
#endif

#endif /* SIGMATUBE_MODEL_PLUGIN_H */
