/* livepage.h: the live page served at / by the HTTP server (docs/metrics.md). */
#ifndef GRITLINE_LIVEPAGE_H
#define GRITLINE_LIVEPAGE_H

#include <stddef.h>

#define LVP_PAGE_MAX 16384 /* bytes of the page, NUL included */

/* Writes the page (HTML, UTF-8) with a NUL; returns its length, or -1 when buf is too small. */
long LVP_Write(char *buf, size_t size);

#endif
