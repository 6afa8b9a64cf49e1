/* frostfit/json.h - thin helpers over jansson for the --json outputs. */
#ifndef FF_JSON_H
#define FF_JSON_H

#include <stdio.h>
#include <jansson.h>

/*
 * A JSON number for x, or JSON null when x is NaN or infinite (JSON has no
 * NaN; an absent result must read as null, never as a made-up number).
 * Returns a new reference, NULL only when out of memory.
 */
json_t *ff_json_num(double x);

/* Sets obj[key] = ff_json_num(x). Returns 0, or -1 when out of memory. */
int ff_json_set_num(json_t *obj, const char *key, double x);

/* A JSON string for s (NULL gives null); text that is not valid UTF-8 is
 * read as Latin-1 and transcoded. New reference, NULL when out of memory. */
json_t *ff_json_str(const char *s);

/* Sets obj[key] = string s (NULL gives null). Returns 0 or -1. */
int ff_json_set_str(json_t *obj, const char *key, const char *s);

/*
 * Writes root to f, indented, with 10 significant digits and a final
 * newline. Returns 0, or -1 when the write failed.
 */
int ff_json_write(const json_t *root, FILE *f);

#endif /* FF_JSON_H */
