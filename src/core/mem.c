/* Memory helpers: growable arrays without overflow. */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "cairn/core.h"

int cairn_grow(void **pbuf, size_t *pcap, size_t need, size_t size)
{
    if (need <= *pcap)
        return 0;
    size_t cap = *pcap ? *pcap : 16;
    while (cap < need) {
        if (cap > SIZE_MAX / 2)
            return -1;
        cap *= 2;
    }
    if (size && cap > SIZE_MAX / size)
        return -1;
    void *p = realloc(*pbuf, cap * size);
    if (!p)
        return -1;
    *pbuf = p;
    *pcap = cap;
    return 0;
}

char *cairn_strdup(const char *s)
{
    if (!s)
        return NULL;
    size_t n = strlen(s) + 1;
    char *p = malloc(n);
    if (p)
        memcpy(p, s, n);
    return p;
}
