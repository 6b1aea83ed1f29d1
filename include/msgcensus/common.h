/* common.h - export macro and version of the msgcensus library. */
#ifndef MSGCENSUS_COMMON_H
#define MSGCENSUS_COMMON_H

#if defined(MC_BUILDING_LIBRARY) && defined(__GNUC__)
#define MC_API __attribute__((visibility("default")))
#else
#define MC_API
#endif

#define MC_VERSION_MAJOR 0
#define MC_VERSION_MINOR 1
#define MC_VERSION_PATCH 0
#define MC_VERSION_STRING "0.1.0"

/*! mc_version() :
 *  @return the library version as "MAJOR.MINOR.PATCH"; never NULL. */
MC_API const char *mc_version(void);

#endif /* MSGCENSUS_COMMON_H */
