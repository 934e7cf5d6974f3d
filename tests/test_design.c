/* test_design.c — the design stage's usage errors: each names the setting in plain words
 * and the offending name, never a command-line option (the CLI adds those, hints.c),
 * with the status the CLI turns into its exit code. */
#include "check.h"
#include "sturdy/design.h"
#include "sturdy/table.h"

#include <stdlib.h>

static const char csv[] = "block,a,b,y\n"
                          "1,lo,x,1.5\n1,lo,y,2.5\n1,hi,x,3.0\n1,hi,y,4.5\n"
                          "2,lo,x,1.7\n2,lo,y,2.1\n2,hi,x,3.3\n2,hi,y,4.0\n";

/* Builds the design of `s` on the table above and checks the status, that the message
 * holds `want` and that it holds no "--" and no "(-" (an option). */
static void expect(const char *what, const sturdy_model_spec *s, sturdy_status want_st,
                   const char *want)
{
    char err[STURDY_ERR_LEN] = "", line[800];
    sturdy_table *t = NULL;
    sturdy_design *d = NULL;
    sturdy_status st = sturdy_table_load_buffer("t.csv", csv, sizeof csv - 1, NULL, &t, err);
    if (!st) st = sturdy_design_build(t, s, &d, err);
    int ok = st == want_st && strstr(err, want) && !strstr(err, "--") && !strstr(err, "(-");
    snprintf(line, sizeof line, "%s: status %d (want %d), message \"%s\" (want \"%s\", no "
             "option named)", what, (int)st, (int)want_st, err, want);
    CHECK(line, ok);
    sturdy_design_free(d);
    sturdy_table_free(t);
}

int main(void)
{
    static const char *const y[] = { "y" }, *const ab[] = { "a", "b" };
    static const char *const lo_hi[] = { "lo", "hi" }, *const lo_lo[] = { "lo", "lo" };
    static const char *const lo_x[] = { "lo", "x" };
    sturdy_model_spec s;
    sturdy_level_order lv[2];

    sturdy_model_spec_init(&s);
    s.factors = ab; s.nfactors = 2;
    expect("no response", &s, STURDY_EUSAGE, "no response column given");
    s.responses = y; s.nresponses = 1; s.nfactors = 0;
    expect("no factor", &s, STURDY_EUSAGE, "no factor given");
    s.nfactors = 2;

    lv[0] = (sturdy_level_order){ "c", lo_hi, 2 };
    s.level_orders = lv; s.nlevel_orders = 1;
    expect("level order for a column outside the model", &s, STURDY_EUSAGE,
           "an order of levels is given for 'c', which is not a factor or the block");
    lv[0] = (sturdy_level_order){ "a", lo_hi, 2 };
    lv[1] = (sturdy_level_order){ "a", lo_hi, 2 };
    s.nlevel_orders = 2;
    expect("two level orders for one factor", &s, STURDY_EUSAGE,
           "an order of levels is given for 'a' twice");
    lv[0] = (sturdy_level_order){ "a", lo_lo, 2 };
    s.nlevel_orders = 1;
    expect("a level listed twice", &s, STURDY_EUSAGE,
           "the order of levels given for factor 'a' lists 'lo' twice");
    lv[0] = (sturdy_level_order){ "a", lo_x, 2 };
    expect("a level not present", &s, STURDY_EUSAGE,
           "the order of levels given for factor 'a': 'x' is not a level of it");
    s.nlevel_orders = 0;

    static const char *const nope[] = { "a\xc3\x97nope" }, *const twice[] = { "a", "a" };
    static const char *const inter_first[] = { "b\xc3\x97" "a", "a" };
    s.term_order = nope; s.nterm_order = 1;
    expect("unknown term in the term order", &s, STURDY_EUSAGE,
           "the order of terms given: the model has no term 'a\xc3\x97nope'");
    s.term_order = twice; s.nterm_order = 2;
    expect("a term listed twice", &s, STURDY_EUSAGE,
           "the order of terms given lists 'a' twice");
    s.term_order = inter_first; s.nterm_order = 2;
    expect("an interaction before its main effect", &s, STURDY_EUSAGE,
           "the order of terms given puts 'a\xc3\x97" "b' before 'a', which it contains");
    return check_done();
}
