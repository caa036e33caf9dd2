/* cairn — least-squares adjustment of survey control networks.
 * Umbrella header: includes every stage's public header. */
#ifndef CAIRN_CAIRN_H
#define CAIRN_CAIRN_H
#include "cairn/core.h"
#include "cairn/model.h"
#include "cairn/input.h"
#include "cairn/solve.h"
#include "cairn/start.h"
#include "cairn/quality.h"
#include "cairn/selinv.h"
#include "cairn/misclosure.h"
#include "cairn/diagnose.h"
#include "cairn/output.h"
#include "cairn/report.h"
#endif
