/* embedded.h: the Lua layer compiled into the module (tools/embed.lua). */
#ifndef SL_EMBEDDED_H
#define SL_EMBEDDED_H
#include <stddef.h>
typedef struct sl_embedded {
  const char *module;   /* e.g. "sluice.help" */
  const char *chunkname;
  const char *source;
  size_t len;
} sl_embedded;
extern const sl_embedded sl_embedded_lua[];
#endif
