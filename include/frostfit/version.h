/* frostfit/version.h - the release number printed by --version. */
#ifndef FF_VERSION_H
#define FF_VERSION_H
#define FF_VERSION "0.1.0"
#endif
