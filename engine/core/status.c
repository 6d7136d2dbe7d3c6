/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "arcwise/status.h"

#include <stdarg.h>
#include <stdio.h>
#include <string.h>

static const char *const status_names[AW_STATUS_COUNT_] = {
  [AW_OK] = "ok",
  [AW_ERR_NO_MEMORY] = "out of memory",
  [AW_ERR_IO] = "input/output error",
  [AW_ERR_PARSE] = "malformed input",
  [AW_ERR_NON_FINITE] = "value is not a finite number",
  [AW_ERR_RANGE] = "value out of range",
  [AW_ERR_UNITS] = "unknown or inconsistent unit",
  [AW_ERR_EMPTY] = "no data",
  [AW_ERR_NO_OVERLAP] = "streams do not overlap in time",
  [AW_ERR_NO_CORRELATION] = "streams do not correlate",
  [AW_ERR_TOO_FEW] = "too few samples",
  [AW_ERR_NO_SWING] = "no swing found",
  [AW_ERR_INCOMPLETE] = "recording is incomplete",
  [AW_ERR_INVALID_ARG] = "invalid argument",
  [AW_ERR_UNSUPPORTED] = "unsupported variant",
};

const char *
aw_status_to_string(AwStatus status)
{
  if ((unsigned)status >= AW_STATUS_COUNT_ || status_names[status] == NULL)
    return "unknown status";
  return status_names[status];
}

void
aw_error_clear(AwError *error)
{
  if (error != NULL)
    memset(error, 0, sizeof *error);
}

AwStatus
aw_error_set(AwError *error, AwStatus status, const char *file, long line, long column,
             const char *fmt, ...)
{
  if (error == NULL)
    return status;
  error->status = status;
  snprintf(error->file, sizeof error->file, "%s", file != NULL ? file : "");
  error->line = line;
  error->column = column;
  va_list ap;
  va_start(ap, fmt);
  vsnprintf(error->message, sizeof error->message, fmt, ap);
  va_end(ap);
  return status;
}

const char *
aw_error_format(const AwError *error, char *buf, size_t buf_size)
{
  if (buf == NULL || buf_size == 0)
    return "";
  if (error == NULL) {
    snprintf(buf, buf_size, "unknown error");
    return buf;
  }
  const char *msg = error->message[0] ? error->message : aw_status_to_string(error->status);
  if (error->file[0] && error->line > 0 && error->column > 0)
    snprintf(buf, buf_size, "%s:%ld:%ld: %s", error->file, error->line, error->column, msg);
  else if (error->file[0] && error->line > 0)
    snprintf(buf, buf_size, "%s:%ld: %s", error->file, error->line, msg);
  else if (error->file[0])
    snprintf(buf, buf_size, "%s: %s", error->file, msg);
  else
    snprintf(buf, buf_size, "%s", msg);
  return buf;
}
