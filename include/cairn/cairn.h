/* cairn — least-squares adjustment of survey control networks.
 * Umbrella header: includes every stage's public header. */
#ifndef CAIRN_CAIRN_H
#define CAIRN_CAIRN_H
#include "cairn/core.h"
#include "cairn/model.h"
#include "cairn/input.h"
#endif
