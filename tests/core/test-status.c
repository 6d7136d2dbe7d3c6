/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Error records format as file:line:column: message. */
#include <string.h>

#include "arcwise/status.h"
#include "testutil.h"

int
main(void)
{
  AwError err;
  char buf[1024];
  aw_error_clear(&err);
  AW_CHECK(aw_error_set(&err, AW_ERR_PARSE, "imu.csv", 12, 4, "'%s' is not a number", "x1") ==
           AW_ERR_PARSE);
  AW_CHECK(strcmp(aw_error_format(&err, buf, sizeof buf), "imu.csv:12:4: 'x1' is not a number") == 0);
  aw_error_set(&err, AW_ERR_EMPTY, "d.csv", 0, 0, "file is empty");
  AW_CHECK(strcmp(aw_error_format(&err, buf, sizeof buf), "d.csv: file is empty") == 0);
  for (int s = 0; s < AW_STATUS_COUNT_; s++)
    AW_CHECK(strlen(aw_status_to_string((AwStatus)s)) > 0);
  AW_CHECK(strcmp(aw_status_to_string((AwStatus)999), "unknown status") == 0);
  return AW_TEST_END();
}
