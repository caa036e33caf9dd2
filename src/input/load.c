/* cairn_load_project: read a project (XML or a lone field book, told
 * apart by content), then validate it as a whole. */
#include <errno.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "input_int.h"

/* FORMAT.md: PROJECT is a project file or a single field book. The
 * extension is not trusted: a file whose first non-blank character (after
 * a byte order mark) is '<' is XML, anything else a field book. */
static int looks_like_xml(const char *text, size_t len)
{
    size_t i = 0;
    if (len >= 3 && !memcmp(text, "\xef\xbb\xbf", 3))
        i = 3;
    while (i < len && (text[i] == ' ' || text[i] == '\t' || text[i] == '\r' ||
                       text[i] == '\n'))
        i++;
    return i < len && text[i] == '<';
}

int cairn_load_project(const char *path, cairn_net **pnet, cairn_error *err)
{
    int before = err->nerrors;
    struct stat sb;
    char *text;
    size_t len;
    *pnet = cairn_net_new();
    cairn_net *net = *pnet;
    if (!net)
        return cairn_error_add(err, CAIRN_SEV_ERROR, path, 0, 0, "out of memory");
    if (stat(path, &sb))
        return cairn_error_add(err, CAIRN_SEV_ERROR, path, 0, 0, "cannot read: %s",
                               strerror(errno));
    if (S_ISDIR(sb.st_mode))
        return cairn_error_add(err, CAIRN_SEV_ERROR, path, 0, 0,
                               "cannot read: it is a directory");
    if (cairn_in_read_file(path, &text, &len))
        return cairn_error_add(err, CAIRN_SEV_ERROR, path, 0, 0, "cannot read: %s",
                               strerror(errno));
    in_open me = {sb.st_dev, sb.st_ino, NULL};
    if (looks_like_xml(text, len)) {
        cairn_in_xml_parse(net, path, text, len, &me, err);
    } else {
        in_ctx c;
        memset(&c, 0, sizeof c);
        c.net = net;
        c.err = err;
        c.file = cairn_net_file(net, path);
        c.top = 1;
        c.lu = net->length_unit;
        c.au = net->angle_unit;
        c.setup = -1;
        c.open = &me;
        if (!c.file)
            cairn_error_add(err, CAIRN_SEV_ERROR, path, 0, 0, "out of memory");
        else
            cairn_in_fieldbook_text(&c, text, len);
    }
    free(text);
    if (!cairn_error_full(err))
        cairn_validate(net, err);
    return err->nerrors > before ? -1 : 0;
}
