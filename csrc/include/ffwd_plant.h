/* ffwd_plant.h - part of the public C API, included by ffwd.h. */
#ifndef FFWD_PLANT_H
#define FFWD_PLANT_H
#ifdef __cplusplus
extern "C" {
#endif

#ifdef __cplusplus
}
#endif
#endif /* FFWD_PLANT_H */
