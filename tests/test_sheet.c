/* test_sheet.c - run sheet reader: a good sheet read exactly, every kind of
 * bad cell reported with its line and column name. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <criterion/criterion.h>

#include "frostfit/sheet.h"
#include "frostfit/formula.h"

/* Writes text to NAME inside a fresh temporary folder; returns the path
 * (static buffer) and creates an empty data file "c.csv" beside it. */
static char tmpdir[256];
static char sheet_path[512];

static const char *write_sheet(const char *text)
{
  char data[600];
  FILE *f;

  snprintf(tmpdir, sizeof tmpdir, "/tmp/ff-sheet-XXXXXX");
  cr_assert_not_null(mkdtemp(tmpdir));
  snprintf(sheet_path, sizeof sheet_path, "%s/runs.csv", tmpdir);
  f = fopen(sheet_path, "w");
  cr_assert_not_null(f);
  fputs(text, f);
  fclose(f);
  snprintf(data, sizeof data, "%s/c.csv", tmpdir);
  f = fopen(data, "w");
  cr_assert_not_null(f);
  fputs("time_s,T (C)\n0,1\n", f);
  fclose(f);
  return sheet_path;
}

static void cleanup(void)
{
  char p[600];

  snprintf(p, sizeof p, "%s/c.csv", tmpdir);
  unlink(p);
  unlink(sheet_path);
  rmdir(tmpdir);
}

#define GOOD_SHEET                                                         \
  "# synthetic run sheet for the reader test\n"                           \
  "Run,FILE,channel,cycle,role,solvent,solvent_g,solute,solute_g,"        \
  "molar_mass,formula,particles,hydrate_waters,kf,blank,note,lab_extra\n" \
  "B1,c.csv,T1,,blank,water,,,,,,,,,,pure water,x\n"                      \
  "\n"                                                                    \
  "S1,c.csv,2,last,Sample,water,25.013,NaCl,0.2385,,NaCl,2,,1.853,B1,"   \
  "\"note with\n a line break, and a comma\",\n"                          \
  "# a comment between runs\n"                                            \
  "S2,c.csv,2,3,sample,Water,24.871,copper sulfate,0.6242,,CuSO4*5H2O,"   \
  "2,,,,,\n"                                                              \
  "U1,c.csv,1,1,unknown,cyclohexane,19.94,unknown A,0.1507,,,,,,,,\n"     \
  "B2,c.csv,1,1,blank,cyclohexane,,,,,,,,,,,\n"                           \
  ",,,,,,,,,,,,,,,,\n"

Test(sheet, good_sheet_read_exactly, .fini = cleanup)
{
  struct ff_sheet s = FF_SHEET_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  const char *path = write_sheet(GOOD_SHEET);

  cr_assert_eq(ff_sheet_read(path, &s, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(s.n, 5);
  cr_assert_eq(s.delimiter, ',');
  cr_assert_str_eq(s.ignored, "lab_extra");

  const struct ff_sheet_row *b1 = &s.row[0], *s1 = &s.row[1],
                            *s2 = &s.row[2], *u1 = &s.row[3];
  cr_assert_eq(b1->line, 3);
  cr_assert_str_eq(b1->run, "B1");
  cr_assert_eq(b1->role, FF_SHEET_BLANK);
  cr_assert_str_eq(b1->channel, "T1");
  cr_assert_eq(b1->cycle, 1);
  cr_assert(isnan(b1->solvent_g));
  cr_assert_eq(b1->blank_row, -1);

  cr_assert_eq(s1->line, 5);
  cr_assert_eq(s1->role, FF_SHEET_SAMPLE);
  cr_assert_eq(s1->cycle, FF_SHEET_CYCLE_LAST);
  cr_assert_str_eq(s1->channel, "2");
  cr_assert_float_eq(s1->solvent_g, 25.013, 1e-12);
  cr_assert_float_eq(s1->solute_g, 0.2385, 1e-12);
  cr_assert_float_eq(s1->kf_k_kg_mol, 1.853, 1e-12);
  cr_assert_eq(s1->particles, 2);
  cr_assert_str_eq(s1->note, "note with\n a line break, and a comma");
  cr_assert_eq(s1->blank_row, 0);
  cr_assert_eq(s1->blank_auto, 0);
  cr_assert(strstr(s1->path, "/c.csv") != NULL);
  cr_assert_eq(strncmp(s1->path, tmpdir, strlen(tmpdir)), 0, "%s", s1->path);

  /* The quoted line break moved the next record down one line, and the
   * comment line another. */
  cr_assert_eq(s2->line, 8);
  cr_assert_eq(s2->cycle, 3);
  cr_assert_str_eq(s2->solvent, "Water");
  cr_assert_eq(s2->blank_row, 0, "only water blank chosen");
  cr_assert_eq(s2->blank_auto, 1);

  cr_assert_eq(u1->line, 9);
  cr_assert_eq(u1->role, FF_SHEET_UNKNOWN);
  cr_assert_eq(u1->blank_row, 4);
  ff_sheet_release(&s);
}

/* Hydrate water: the formula's 5 H2O leave the anhydrous mass (CuSO4,
 * 159.61 g/mol from IUPAC 2021 abridged weights: Cu 63.546, S 32.06,
 * O 15.999) and the weighed mass includes them. */
Test(sheet, check_resolves_formula_and_hydrate, .fini = cleanup)
{
  struct ff_sheet s = FF_SHEET_INIT;
  struct ff_atomic_table at = FF_ATOMIC_TABLE_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  const char *path = write_sheet(GOOD_SHEET);

  cr_assert_eq(ff_atomic_table_load(&at, "datasets/atomic_weights.csv", &d),
               FF_OK, "%s", d.msg);
  cr_assert_eq(ff_sheet_read(path, &s, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(ff_sheet_check(&s, NULL, &at, &d), FF_OK, "%s", d.msg);
  cr_assert_float_eq(s.row[2].m_anhydrous_g_mol, 159.6, 0.02);
  cr_assert_float_eq(s.row[2].waters, 5.0, 1e-12);
  cr_assert_float_eq(s.row[2].m_weighed_g_mol,
                     s.row[2].m_anhydrous_g_mol + 5 * 18.015268, 1e-9);
  /* NaCl 58.44 g/mol (IUPAC 2021 abridged: Na 22.990, Cl 35.45) */
  cr_assert_float_eq(s.row[1].m_anhydrous_g_mol, 58.44, 0.01);
  ff_sheet_release(&s);
  ff_atomic_table_release(&at);
}

Test(sheet, semicolons_decimal_comma_and_bom, .fini = cleanup)
{
  struct ff_sheet s = FF_SHEET_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  const char *path = write_sheet(
    "\xEF\xBB\xBFrun;file;role;solvent;solvent_g;solute;solute_g;"
    "molar_mass;blank\r\n"
    "B;c.csv;blank;water;;;;;\r\n"
    "S;c.csv;sample;water;25,125;urea;0,3012;60,06;B\r\n");

  cr_assert_eq(ff_sheet_read(path, &s, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(s.delimiter, ';');
  cr_assert_eq(s.n, 2);
  cr_assert_eq(s.row[1].line, 3);
  cr_assert_float_eq(s.row[1].solvent_g, 25.125, 1e-12);
  cr_assert_float_eq(s.row[1].molar_mass_g_mol, 60.06, 1e-12);
  ff_sheet_release(&s);
}

/* Each bad sheet: the line, the column name and number, a word of the
 * message. */
struct bad_case {
  const char *text;
  unsigned long line;
  const char *col;        /* column name that must appear in the message */
  unsigned long colno;    /* 0: not known (column absent from the header) */
  const char *words;
};

#define HDR "run,file,role,solvent,solvent_g,solute,solute_g,molar_mass,blank\n"
#define B1 "B1,c.csv,blank,water,,,,,\n"

static const struct bad_case bad_cases[] = {
  { HDR B1 "S1,c.csv,smaple,water,25,NaCl,0.2,58.44,B1\n", 3, "role", 3,
    "unknown role 'smaple'" },
  { HDR B1 "S1,c.csv,sample,water,,NaCl,0.2,58.44,B1\n", 3, "solvent_g", 5,
    "missing" },
  { HDR B1 "S1,c.csv,sample,water,25,NaCl,0.2x,58.44,B1\n", 3, "solute_g", 7,
    "expected a number, found '0.2x'" },
  { HDR B1 "S1,c.csv,sample,water,25,NaCl,0.2,58.44,B9\n", 3, "blank", 9,
    "no run with id 'B9'" },
  { HDR B1 "S1,c.csv,sample,water,25,NaCl,0.2,58.44,B1\n"
    "S2,c.csv,sample,water,25,NaCl,0.2,58.44,S1\n", 4, "blank", 9,
    "has role 'sample', not blank" },
  { HDR "B1,c.csv,blank,water,,,,,B2\nB2,c.csv,blank,water,,,,,B1\n", 2,
    "blank", 9, "loop" },
  { HDR B1 "B1,c.csv,blank,water,,,,,\n", 3, "run", 1,
    "'B1' already used on line 2" },
  { HDR B1 "S1,c.csv,sample,water,0,NaCl,0.2,58.44,B1\n", 3, "solvent_g", 5,
    "out of range" },
  { HDR B1 "S1,c.csv,sample,water,-3.5,NaCl,0.2,58.44,B1\n", 3, "solvent_g",
    5, "out of range" },
  { HDR B1 "S1,c.csv,sample,water,25,NaCl,1e300,58.44,B1\n", 3, "solute_g",
    7, "out of range" },
  { HDR B1 "S1,c.csv,sample,water,25,NaCl,0.2,,B1\n", 3, "molar_mass", 8,
    "give molar_mass or formula" },
  { "run,file,role,solvent,solute,solute_g,molar_mass,blank\n"
    "B1,c.csv,blank,water,,,,\n"
    "S1,c.csv,sample,water,NaCl,0.2,58.44,B1\n", 3, "solvent_g", 0,
    "not in the header" },
  { HDR B1 "\n# comment\nS1,c.csv,sample,water,25,NaCl,0.2,58.44,B1,extra\n",
    5, "cell 10", 10, "header has only 9 columns" },
  { "run,file,role,solvent,cycle\nB1,c.csv,blank,water,second\n", 2, "cycle",
    5, "expected 'last'" },
  { "run,file,role,solvent,method\nB1,c.csv,blank,water,tangent\n", 2,
    "method", 5, "unknown method 'tangent'" },
  /* A probe id of 64 bytes, one more than the 63 allowed (constructed). */
  { "run,file,probe,role,solvent\n"
    "B1,c.csv,P1,blank,water\n"
    "B2,c.csv,P1234567890123456789012345678901234567890123456789012345678901"
    "23,blank,water\n", 3, "probe", 3, "longer than 63" },
  { "run,file,role,solvent,probe\nB1,c.csv,blank,water,\"P\x01\"\n", 2,
    "probe", 5, "control character" },
};

Test(sheet, each_bad_cell_names_line_and_column, .fini = cleanup)
{
  for (size_t k = 0; k < sizeof bad_cases / sizeof bad_cases[0]; k++) {
    const struct bad_case *c = &bad_cases[k];
    struct ff_sheet s = FF_SHEET_INIT;
    struct ff_diag d = FF_DIAG_INIT;
    const char *path = write_sheet(c->text);
    char want[80];

    cr_assert_eq(ff_sheet_read(path, &s, &d), FF_EINPUT, "case %zu", k);
    cr_expect_eq(d.line, c->line, "case %zu: line %lu, want %lu (%s)", k,
                 d.line, c->line, d.msg);
    cr_expect_eq(d.col, c->colno, "case %zu: column %lu, want %lu (%s)", k,
                 d.col, c->colno, d.msg);
    if (strncmp(c->col, "cell", 4) == 0)
      snprintf(want, sizeof want, "%s", c->col);
    else
      snprintf(want, sizeof want, "column '%s'", c->col);
    cr_expect(strstr(d.msg, want) != NULL, "case %zu: '%s' lacks %s", k,
              d.msg, want);
    cr_expect(strstr(d.msg, c->words) != NULL, "case %zu: '%s' lacks '%s'",
              k, d.msg, c->words);
    cr_expect_str_eq(d.path, path);
    ff_sheet_release(&s);
    cleanup();
  }
}

/* A bad row does not stop the others: they are read and usable. */
Test(sheet, bad_row_leaves_others_usable, .fini = cleanup)
{
  struct ff_sheet s = FF_SHEET_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  const char *path = write_sheet(HDR B1
    "S1,c.csv,sample,water,25,NaCl,abc,58.44,B1\n"
    "S2,c.csv,sample,water,25,NaCl,0.25,58.44,B1\n");

  cr_assert_eq(ff_sheet_read(path, &s, &d), FF_EINPUT);
  cr_assert_eq(s.n, 3);
  cr_assert_eq(s.n_bad, 1);
  cr_assert_eq(s.row[1].diag.status, FF_EINPUT);
  cr_assert_eq(s.row[2].diag.status, FF_OK);
  cr_assert_float_eq(s.row[2].solute_g, 0.25, 1e-12);
  ff_sheet_release(&s);
}

Test(sheet, header_problems_stop_the_read, .fini = cleanup)
{
  struct ff_sheet s = FF_SHEET_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  const char *path = write_sheet("# only a comment\nname,path,kind\n"
                                 "a,b,c\n");

  cr_assert_eq(ff_sheet_read(path, &s, &d), FF_EINPUT);
  cr_assert_eq(d.line, 2);
  cr_assert(strstr(d.msg, "'run', 'file' and 'role'") != NULL, "%s", d.msg);
  cr_assert_eq(s.n, 0);
  ff_sheet_release(&s);
  cleanup();

  ff_diag_clear(&d);
  path = write_sheet("run,file,role,Role\n");
  cr_assert_eq(ff_sheet_read(path, &s, &d), FF_EINPUT);
  cr_assert_eq(d.col, 4);
  cr_assert(strstr(d.msg, "appears twice") != NULL, "%s", d.msg);
  ff_sheet_release(&s);
}

Test(sheet, check_reports_missing_file_and_formula, .fini = cleanup)
{
  struct ff_sheet s = FF_SHEET_INIT;
  struct ff_atomic_table at = FF_ATOMIC_TABLE_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  const char *path = write_sheet(
    "run,file,role,solvent,solvent_g,solute,solute_g,formula,blank\n"
    "B1,c.csv,blank,water,,,,,\n"
    "S1,nothere.csv,sample,water,25,NaCl,0.2,NaCl,B1\n"
    "S2,c.csv,sample,water,25,salt,0.2,NaXq,B1\n"
    "S3,c.csv,sample,water,25,salt,0.2,NaCl,B1\n");

  cr_assert_eq(ff_atomic_table_load(&at, "datasets/atomic_weights.csv", &d),
               FF_OK, "%s", d.msg);
  cr_assert_eq(ff_sheet_read(path, &s, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(ff_sheet_check(&s, NULL, &at, &d), FF_EINPUT);
  cr_assert_eq(d.line, 3);
  cr_assert_eq(d.col, 2);
  cr_assert(strstr(d.msg, "column 'file'") != NULL, "%s", d.msg);
  cr_assert(strstr(d.msg, "nothere.csv") != NULL, "%s", d.msg);
  cr_assert(strstr(d.msg, tmpdir) != NULL, "names the path tried: %s",
            d.msg);
  cr_assert_eq(s.row[2].diag.status, FF_EINPUT);
  cr_assert_eq(s.row[2].diag.line, 4);
  cr_assert_eq(s.row[2].diag.col, 8);
  cr_assert(strstr(s.row[2].diag.msg, "column 'formula'") != NULL, "%s",
            s.row[2].diag.msg);
  cr_assert_eq(s.row[3].diag.status, FF_OK);
  ff_sheet_release(&s);
  ff_atomic_table_release(&at);
}

Test(sheet, unknown_solvent_names_the_known_ones, .fini = cleanup)
{
  struct ff_sheet s = FF_SHEET_INIT;
  struct ff_solvent_table t = FF_SOLVENT_TABLE_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  const char *path = write_sheet(HDR
                                 "B1,c.csv,blank,wasser,,,,,\n");

  cr_assert_eq(ff_solvent_table_load(&t, "datasets/solvents.csv", &d), FF_OK,
               "%s", d.msg);
  cr_assert_eq(ff_sheet_read(path, &s, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(ff_sheet_check(&s, &t, NULL, &d), FF_EINPUT);
  cr_expect_eq(d.line, 2);
  cr_expect_eq(d.col, 4);
  cr_expect(strstr(d.msg, "column 'solvent': unknown solvent 'wasser'")
            != NULL, "%s", d.msg);
  cr_expect(strstr(d.msg, "water") != NULL && strstr(d.msg, "cyclohexane")
            != NULL, "names the known ones: %s", d.msg);
  ff_sheet_release(&s);
  ff_solvent_table_release(&t);
}

/* Quotes count only where CSV says so: a lone quote in a comment or in the
 * middle of an unquoted cell must not swallow the lines after it. */
Test(sheet, stray_quotes_do_not_swallow_lines, .fini = cleanup)
{
  struct ff_sheet s = FF_SHEET_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  const char *path = write_sheet(
    "# the 5\" tube, \"old bath\n"
    "run,file,role,solvent,note\n"
    "B1,c.csv,blank,water,a 5\" tube\n"
    "B2,c.csv,blank,water,\"said \"\"fine\"\"\"\n"
    "B3,c.csv,blank,water,last\n");

  cr_assert_eq(ff_sheet_read(path, &s, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(s.n, 3);
  cr_expect_str_eq(s.row[0].note, "a 5\" tube");
  cr_expect_str_eq(s.row[1].note, "said \"fine\"");
  cr_expect_eq(s.row[2].line, 5);
  cr_expect_str_eq(s.row[2].run, "B3");
  ff_sheet_release(&s);
}

/* A row whose role cannot be read is no role at all: it must not become
 * the blank that the other runs of its solvent are measured against. */
Test(sheet, bad_role_row_is_never_a_blank, .fini = cleanup)
{
  struct ff_sheet s = FF_SHEET_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  const char *path = write_sheet(
    "run,file,role,solvent,solvent_g,solute,molality,particles\n"
    "B1,c.csv,smaple,water,25,,,\n"
    "S1,c.csv,sample,water,25,urea,0.1,1\n");

  cr_assert_eq(ff_sheet_read(path, &s, &d), FF_EINPUT);
  cr_assert_eq(s.n, 2);
  cr_expect_eq(s.row[0].role, FF_SHEET_ROLE_NONE);
  cr_expect_str_eq(ff_sheet_role_name(s.row[0].role), "?");
  cr_expect_neq(s.row[1].diag.status, FF_OK,
                "the sample has no blank to be measured against");
  ff_sheet_release(&s);
}

/* The optional probe column: trimmed, empty = not given, 63 bytes fit, its
 * alias probe_id; without the column every probe is "" (constructed). */
Test(sheet, probe_column_read, .fini = cleanup)
{
  struct ff_sheet s = FF_SHEET_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  const char *path = write_sheet(
    "run,file,role,solvent,Probe\n"
    "B1,c.csv,blank,water,  P1 \n"
    "B2,c.csv,blank,water,\n"
    "B3,c.csv,blank,water,"
    "P12345678901234567890123456789012345678901234567890123456789012\n");

  cr_assert_eq(ff_sheet_read(path, &s, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(s.col[FF_SC_PROBE], 5);
  cr_assert_str_eq(s.ignored, "");
  cr_expect_str_eq(s.row[0].probe, "P1");
  cr_expect_str_eq(s.row[1].probe, "");
  cr_expect_eq(strlen(s.row[2].probe), 63);
  cr_expect_str_eq(ff_sheet_col_name(FF_SC_PROBE), "probe");
  ff_sheet_release(&s);
  cleanup();

  s = (struct ff_sheet)FF_SHEET_INIT;
  path = write_sheet("run,file,role,solvent,probe_id\nB1,c.csv,blank,water,"
                     "T7\n");
  cr_assert_eq(ff_sheet_read(path, &s, &d), FF_OK, "%s", d.msg);
  cr_expect_str_eq(s.row[0].probe, "T7");
  ff_sheet_release(&s);
  cleanup();

  s = (struct ff_sheet)FF_SHEET_INIT;
  path = write_sheet("run,file,role,solvent\nB1,c.csv,blank,water\n");
  cr_assert_eq(ff_sheet_read(path, &s, &d), FF_OK, "%s", d.msg);
  cr_expect_eq(s.col[FF_SC_PROBE], 0);
  cr_expect_str_eq(s.row[0].probe, "");
  ff_sheet_release(&s);
}
