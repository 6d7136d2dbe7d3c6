/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Runs a fuzz target over files and folders given on the command line, once each: the
 * committed seed corpus and every input that once broke a reader (tests/fuzz/corpus/TARGET).
 * This is how the ordinary test suite (gcc, and the ASan/UBSan build) replays what fuzzing
 * found without needing clang or libFuzzer. Exit 0 when every input ran; the target aborts on a
 * broken property. */
#include "fuzz-common.h"

#include <dirent.h>
#include <errno.h>
#include <sys/stat.h>

static int
run_file(const char *path)
{
  FILE *f = fopen(path, "rb");
  if (f == NULL) {
    fprintf(stderr, "%s: %s\n", path, strerror(errno));
    return -1;
  }
  size_t cap = 4096, len = 0;
  uint8_t *buf = malloc(cap);
  for (;;) {
    if (buf == NULL) {
      fclose(f);
      return -1;
    }
    size_t got = fread(buf + len, 1, cap - len, f);
    len += got;
    if (len < cap)
      break;
    cap *= 2;
    uint8_t *nb = realloc(buf, cap);
    if (nb == NULL)
      free(buf);
    buf = nb;
  }
  fclose(f);
  /* An exact-size copy, so that ASan sees a read one past the end of the input. */
  uint8_t *exact = malloc(len > 0 ? len : 1);
  if (exact == NULL) {
    free(buf);
    return -1;
  }
  memcpy(exact, buf, len);
  free(buf);
  LLVMFuzzerTestOneInput(exact, len);
  free(exact);
  return 0;
}

static int
cmp_names(const void *a, const void *b)
{
  return strcmp(*(char *const *)a, *(char *const *)b);
}

int
main(int argc, char **argv)
{
  long ran = 0;
  int bad = 0;
  for (int i = 1; i < argc; i++) {
    struct stat st;
    if (stat(argv[i], &st) != 0) {
      fprintf(stderr, "%s: %s\n", argv[i], strerror(errno));
      bad = 1;
      continue;
    }
    if (!S_ISDIR(st.st_mode)) {
      bad |= run_file(argv[i]) != 0;
      ran++;
      continue;
    }
    DIR *d = opendir(argv[i]);
    if (d == NULL) {
      bad = 1;
      continue;
    }
    char **names = NULL;
    size_t n = 0;
    struct dirent *e;
    while ((e = readdir(d)) != NULL) {
      if (e->d_name[0] == '.')
        continue;
      char **nn = realloc(names, (n + 1) * sizeof *names);
      if (nn == NULL)
        break;
      names = nn;
      size_t l = strlen(argv[i]) + strlen(e->d_name) + 2;
      names[n] = malloc(l);
      if (names[n] == NULL)
        break;
      snprintf(names[n], l, "%s/%s", argv[i], e->d_name);
      n++;
    }
    closedir(d);
    qsort(names, n, sizeof *names, cmp_names);
    for (size_t k = 0; k < n; k++) {
      bad |= run_file(names[k]) != 0;
      ran++;
      free(names[k]);
    }
    free(names);
  }
  printf("%ld inputs replayed\n", ran);
  if (ran == 0) {
    fprintf(stderr, "no inputs: the corpus is missing\n");
    return 1;
  }
  return bad;
}
