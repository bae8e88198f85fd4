/* ffwd_config.h - compile-time configuration of the ffwd core.
 *
 * FFWD_MAX_DOF  largest number of joints a model may have (default 16).
 * FFWD_SINGLE   define to build the core in single precision (ffwd_real = float).
 */
#ifndef FFWD_CONFIG_H
#define FFWD_CONFIG_H

#ifndef FFWD_MAX_DOF
#define FFWD_MAX_DOF 16
#endif

#ifdef FFWD_SINGLE
typedef float ffwd_real;
#else
typedef double ffwd_real;
#endif

#endif /* FFWD_CONFIG_H */
