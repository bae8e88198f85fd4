/* ffwd_governor.h - part of the public C API, included by ffwd.h. */
#ifndef FFWD_GOVERNOR_H
#define FFWD_GOVERNOR_H
#ifdef __cplusplus
extern "C" {
#endif

#ifdef __cplusplus
}
#endif
#endif /* FFWD_GOVERNOR_H */
