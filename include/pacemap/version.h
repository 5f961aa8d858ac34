/*
 * version.h - the version of pacemap, kept in this one place: the program's
 * --version, the manual page and the pkg-config file (Makefile) read it here.
 */
#ifndef PACEMAP_VERSION_H
#define PACEMAP_VERSION_H

#define PM_VERSION "0.1.0"

#endif
