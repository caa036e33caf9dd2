/* cairn — input: the XML project loader and the field-book parser.
 *
 * Both feed the same cairn_net (model.h). Loading goes on past an error to
 * report up to CAIRN_MAX_ERRORS of them; when any error was found the net
 * must not be adjusted. Inputs are opened read-only and never modified.
 */
#ifndef CAIRN_INPUT_H
#define CAIRN_INPUT_H

#include "cairn/core.h"
#include "cairn/model.h"

/** Load a project: an XML project file, or a single field book (chosen by
 *  content: a file whose first non-blank character is '<' is XML). File
 *  names in diagnostics and in cairn_src are as given (relative paths of
 *  included field books are joined to the project file's directory).
 *  On return *pnet holds whatever was loaded (also on error, for the
 *  caller to free). Returns 0 when no error was reported (warnings may
 *  be), -1 otherwise. */
int cairn_load_project(const char *path, cairn_net **pnet, cairn_error *err);

/** Read one field book into net (used by cairn_load_project; exposed for
 *  tests and tools). `depth` is the include depth (0 for the top file). */
int cairn_load_fieldbook(cairn_net *net, const char *path, int depth,
                         cairn_error *err);

/** Parse a field book held in memory; `name` is used in diagnostics. */
int cairn_parse_fieldbook(cairn_net *net, const char *name, const char *text,
                          size_t len, int depth, cairn_error *err);

/** Parse an XML project held in memory; `name` is used in diagnostics and
 *  to resolve included field books. */
int cairn_parse_project_xml(cairn_net *net, const char *name, const char *text,
                            size_t len, cairn_error *err);

/** Cross-record validation after everything is read (undefined or
 *  ambiguous instruments, hold without coordinates, marks no observation
 *  touches (warning) ...). Returns 0 or -1. */
int cairn_validate(cairn_net *net, cairn_error *err);

/** Longest line accepted in a field book, in bytes. */
#define CAIRN_LINE_MAX 65536
/** Deepest chain of field-book includes. */
#define CAIRN_INCLUDE_MAX 16

#endif
