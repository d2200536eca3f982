/* Tests of the graph file parser: every statement of the format, and each bad input's position.
 * See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_test.h>

#include "coverage/coverage.h"

/* The reference for these checks is the format itself (README.md, "The graph file"): the values
 * are those written in the texts below, so comparisons are exact (tolerance 0); numbers such as
 * 4.5 and 0.25 are exactly representable, and parsing them with strtod must give them back. */

static const char *good_text =
    "# An invented clinic model for the parser tests (not real data).\r\n"
    "input  arrivals real [10, 40]      # trailing comment\n"
    "\n"
    "input\tstaff\tinteger [2, 8]\n"
    "input  fast bool\n"
    "input  site levels {north, \"south side\", east}\n"
    "input  \"it's; \\\"odd\\\"\" real [-1.5, 1e1]\n"
    "input  \"<script>\" bool\n"
    "hidden mix real\n"
    "hidden kind levels\n"
    "hidden kind2 levels {a, b}\n"
    "hidden span real [0, 3]\n"
    "output wait real noise 4.5\n"
    "output left integer\n"
    "output ok bool\n"
    "output grade levels {low, high} noise 0.5\n"
    "output \"input\" real\n"
    "default effect 0.25 sd\n"
    "default margin 0.1\n"
    "design independent\n"
    "arrivals -> wait expect + effect 0.5\n"
    "staff -> wait -> left effect 0.3 sd\n"
    "fast, site -> ok, grade expect -\n"
    "site -> mix -> wait\n"
    "\"it's; \\\"odd\\\"\" -> left   # a quoted name in an edge\n"
    "\"<script>\" -> \"input\" effect 2 expect -\n"
    "hold staff 4\n"
    "hold fast true\n"
    "hold site \"south side\"\n"
    "hold arrivals 12.5\n"
    "hold \"<script>\" 0\n";

static long find(const cov_graph *g, const char *name)
{
    long k = cov_graph_find(g, name);
    gsl_test(k < 0, "graph: variable '%s' is declared", name);
    return k;
}

static void test_good(void)
{
    cov_graph *g = NULL;
    cov_error err;
    int rc = cov_graph_parse_text("good.graph", good_text, &g, &err);
    gsl_test_int(rc, COV_OK, "graph: the full example parses (%s %s)", rc ? err.where : "",
                 rc ? err.msg : "");
    if (g == NULL) return;
    gsl_test_int((int)g->n_vars, 15, "graph: 15 variables declared");
    gsl_test_int((int)g->n_edges, 11, "graph: 11 edges (chains and comma lists expanded)");

    long a = find(g, "arrivals"), st = find(g, "staff"), fa = find(g, "fast"),
         si = find(g, "site"), od = find(g, "it's; \"odd\""), sc = find(g, "<script>"),
         mix = find(g, "mix"), kind = find(g, "kind"), kind2 = find(g, "kind2"),
         span = find(g, "span"), w = find(g, "wait"), le = find(g, "left"), ok = find(g, "ok"),
         gr = find(g, "grade"), qi = find(g, "input");
    if (a < 0 || st < 0 || fa < 0 || si < 0 || od < 0 || sc < 0 || mix < 0 || kind < 0 ||
        kind2 < 0 || span < 0 || w < 0 || le < 0 || ok < 0 || gr < 0 || qi < 0) {
        cov_graph_free(g);
        return;
    }
    gsl_test_int(cov_graph_find(g, "nothing"), -1, "graph: find returns -1 for an unknown name");
    const cov_var *v = g->vars;
    gsl_test_int(v[a].role, COV_INPUT, "graph: arrivals is an input");
    gsl_test_int(v[a].type, COV_REAL, "graph: arrivals is real");
    gsl_test_abs(v[a].lo, 10, 0, "graph: arrivals lo");
    gsl_test_abs(v[a].hi, 40, 0, "graph: arrivals hi");
    gsl_test_int(v[a].line, 2, "graph: arrivals declared on line 2");
    gsl_test_int(v[a].col, 8, "graph: arrivals name at column 8");
    gsl_test_int(v[st].type, COV_INTEGER, "graph: staff is integer (tab-separated line)");
    gsl_test_abs(v[st].lo, 2, 0, "graph: staff lo");
    gsl_test_abs(v[st].hi, 8, 0, "graph: staff hi");
    gsl_test_int(v[st].line, 4, "graph: blank line counted: staff on line 4");
    gsl_test_int(v[fa].type, COV_BOOL, "graph: fast is bool");
    gsl_test_abs(v[fa].lo, 0, 0, "graph: bool input lo 0");
    gsl_test_abs(v[fa].hi, 1, 0, "graph: bool input hi 1");
    gsl_test_int(v[si].type, COV_LEVELS, "graph: site is a level set");
    gsl_test_int((int)v[si].n_levels, 3, "graph: site has 3 levels");
    if (v[si].n_levels == 3) {
        gsl_test(strcmp(v[si].levels[0], "north") != 0, "graph: level 0 is north");
        gsl_test(strcmp(v[si].levels[1], "south side") != 0, "graph: quoted level 'south side'");
        gsl_test(strcmp(v[si].levels[2], "east") != 0, "graph: level 2 is east");
    }
    gsl_test_abs(v[si].lo, 0, 0, "graph: level set lo 0");
    gsl_test_abs(v[si].hi, 2, 0, "graph: level set hi L-1 = 2");
    gsl_test_abs(v[od].lo, -1.5, 0, "graph: quoted name with escapes; negative lo");
    gsl_test_abs(v[od].hi, 10, 0, "graph: exponent notation 1e1");
    gsl_test_int(v[sc].type, COV_BOOL, "graph: \"<script>\" is a bool input");
    gsl_test_int(v[mix].role, COV_HIDDEN, "graph: mix is hidden");
    gsl_test(!isnan(v[mix].lo), "graph: hidden variable has no range (NAN)");
    gsl_test_int((int)v[kind].n_levels, 0, "graph: hidden level set without levels");
    gsl_test_int((int)v[kind2].n_levels, 2, "graph: hidden level set with levels");
    gsl_test(!isnan(v[span].lo), "graph: a hidden range is checked but not stored");
    gsl_test_int(v[w].role, COV_OUTPUT, "graph: wait is an output");
    gsl_test_abs(v[w].noise_sd, 4.5, 0, "graph: wait noise SD");
    gsl_test(!isnan(v[le].noise_sd), "graph: no noise given: NAN");
    gsl_test_int(v[le].type, COV_INTEGER, "graph: left is integer");
    gsl_test_int(v[ok].type, COV_BOOL, "graph: ok is bool");
    gsl_test_int((int)v[gr].n_levels, 2, "graph: output level set");
    gsl_test_abs(v[gr].noise_sd, 0.5, 0, "graph: noise after levels");
    gsl_test_int(v[qi].role, COV_OUTPUT, "graph: a quoted reserved word is a name");

    gsl_test_abs(g->default_effect.value, 0.25, 0, "graph: default effect 0.25");
    gsl_test_int(g->default_effect.unit, COV_UNIT_SD, "graph: default effect in sd");
    gsl_test_abs(g->margin.value, 0.1, 0, "graph: default margin 0.1");
    gsl_test_int(g->margin.unit, COV_UNIT_RAW, "graph: margin without sd is raw");
    gsl_test_int(g->inputs_independent, 1, "graph: design independent");

    /* Edges in statement order: a chain gives its links in order, a comma list every pair with the
     * left-hand names outermost. */
    static const char *const want[11][2] = {
        {"arrivals", "wait"}, {"staff", "wait"}, {"wait", "left"}, {"fast", "ok"},
        {"fast", "grade"}, {"site", "ok"}, {"site", "grade"}, {"site", "mix"}, {"mix", "wait"},
        {"it's; \"odd\"", "left"}, {"<script>", "input"}};
    for (size_t i = 0; i < 11 && i < g->n_edges; i++) {
        const cov_edge *e = &g->edges[i];
        gsl_test(strcmp(v[e->from].name, want[i][0]) != 0 || strcmp(v[e->to].name, want[i][1]) != 0,
                 "graph: edge %zu is %s -> %s (got %s -> %s)", i, want[i][0], want[i][1],
                 v[e->from].name, v[e->to].name);
    }
    if (g->n_edges == 11) {
        const cov_edge *e = g->edges;
        gsl_test_int(e[0].sign, 1, "graph: expect + gives sign +1");
        gsl_test_abs(e[0].effect.value, 0.5, 0, "graph: edge effect 0.5");
        gsl_test_int(e[0].effect.unit, COV_UNIT_RAW, "graph: edge effect raw");
        gsl_test_int(e[0].line, 21, "graph: edge line");
        gsl_test_int(e[1].sign, 0, "graph: no expect gives sign 0");
        gsl_test_abs(e[1].effect.value, 0.3, 0, "graph: chain annotation on first link");
        gsl_test_abs(e[2].effect.value, 0.3, 0, "graph: chain annotation on second link");
        gsl_test_int(e[2].effect.unit, COV_UNIT_SD, "graph: chain annotation in sd");
        gsl_test_int(e[2].col, 10, "graph: second link's column is its source 'wait'");
        for (int i = 3; i < 7; i++) {
            gsl_test_int(e[i].sign, -1, "graph: comma list edge %d has sign -1", i);
            gsl_test(!isnan(e[i].effect.value), "graph: comma list edge %d has no own effect", i);
        }
        gsl_test_int(e[10].sign, -1, "graph: annotations in either order (sign)");
        gsl_test_abs(e[10].effect.value, 2, 0, "graph: annotations in either order (effect)");
    }
    gsl_test_int(v[st].held, 1, "graph: hold staff");
    gsl_test_abs(v[st].held_value, 4, 0, "graph: staff held at 4");
    gsl_test_abs(v[fa].held_value, 1, 0, "graph: fast held at true = 1");
    gsl_test_abs(v[si].held_value, 1, 0, "graph: site held at level index 1");
    gsl_test_abs(v[a].held_value, 12.5, 0, "graph: arrivals held at 12.5");
    gsl_test_abs(v[sc].held_value, 0, 0, "graph: bool held at 0");
    gsl_test_int(v[od].held, 0, "graph: an input without hold is not held");
    cov_graph_free(g);
}

static void test_defaults(void)
{
    cov_graph *g = NULL;
    cov_error err;
    int rc = cov_graph_parse_text("d.graph",
                                  "input x real [0, 1]\nhidden h real\noutput y real\n"
                                  "x -> y effect 1\nh -> y\nx -> h\n", &g, &err);
    gsl_test_int(rc, COV_OK, "graph: edges with a hidden end need no effect of interest");
    if (g == NULL) return;
    gsl_test(!isnan(g->default_effect.value), "graph: no default effect: NAN");
    gsl_test(!isnan(g->margin.value), "graph: no default margin: NAN");
    gsl_test_int(g->inputs_independent, 0, "graph: inputs share the design unless stated");
    gsl_test_int(g->vars[0].held, 0, "graph: not held by default");
    cov_graph_free(g);

    rc = cov_graph_parse_text("e.graph", "", &g, &err);
    gsl_test_int(rc, COV_OK, "graph: an empty file is an empty graph");
    gsl_test_int(g ? (int)g->n_vars : -1, 0, "graph: empty file has no variables");
    cov_graph_free(g);

    rc = cov_graph_parse_file("/nonexistent/dir/x.graph", &g, &err);
    gsl_test_int(rc, COV_EIO, "graph: a missing file is COV_EIO");
    gsl_test(g != NULL, "graph: nothing is returned on failure");
    cov_graph_free(NULL);
}

/* Each bad input: the text, the expected "line:column" and a word the message must contain. */
struct bad_case {
    const char *what, *text, *where, *says;
};

#define DECL_XY "input x real [0, 1]\noutput y real\noutput z real\ndefault effect 1\n"

static const struct bad_case bad_cases[] = {
    {"cycle", "output a real\noutput b real\noutput c real\ndefault effect 1\n"
              "a -> b\nb -> c\nc -> a\n", "7:6", "cycle: c -> a -> b -> c"},
    {"cycle through a chain", DECL_XY "y -> z -> y\n", "5:11", "cycle: z -> y -> z"},
    {"self loop", DECL_XY "y -> y\n", "5:6", "cycle: y -> y"},
    {"undeclared, with suggestion", "input arrivals real [0, 1]\noutput wait real\n"
     "default effect 1\narival -> wait\n", "4:1", "did you mean 'arrivals'?"},
    {"undeclared target", DECL_XY "x -> q\n", "5:6", "undeclared variable 'q'"},
    {"declared later is undeclared", "default effect 1\ninput x real [0, 1]\nx -> y\n"
     "output y real\n", "3:6", "undeclared"},
    {"duplicate declaration", "input x real [0, 1]\noutput x real\n", "2:8",
     "second declaration of 'x'"},
    {"duplicate declaration, quoted", "input x real [0, 1]\noutput \"x\" real\n", "2:8",
     "second declaration"},
    {"duplicate edge", DECL_XY "x -> y\nx -> y\n", "6:6", "second edge x -> y"},
    {"duplicate edge in a list", DECL_XY "x -> y, y\n", "5:9", "second edge"},
    {"empty domain", "input x real [1, 1]\n", "1:14", "empty range"},
    {"inverted domain", "input x integer [5, 2]\n", "1:17", "inverted range"},
    {"integer range not whole", "input n integer [0.5, 3]\n", "1:18", "whole number"},
    {"single level", "input s levels {a}\n", "1:16", "at least 2"},
    {"repeated level", "input s levels {a, b, a}\n", "1:23", "level 'a' twice"},
    {"edge into an input", "input x real [0, 1]\ninput w bool\ndefault effect 1\nx -> w\n",
     "4:6", "edge into the input 'w'"},
    {"unknown word", "inptu x real [0, 1]\n", "1:1", "did you mean 'input'?"},
    {"unknown word, no suggestion", "frobnicate\n", "1:1", "unknown word 'frobnicate'"},
    {"unknown type", "input x reel [0, 1]\n", "1:9", "did you mean 'real'?"},
    {"reserved word as a name", "input real real [0, 1]\n", "1:7", "reserved word 'real'"},
    {"reserved word at the start", "sd x\n", "1:1", "'sd' at the start"},
    {"bad number", "input x real [0, 1.2.3]\n", "1:18", "'1.2.3', expected a decimal number"},
    {"number glued to letters", "input x real [0, 5abc]\n", "1:18", "decimal number"},
    {"hexadecimal number", "input x real [0, 0x10]\n", "1:18", "decimal number"},
    {"range bound not a number", "input x real [0, high]\n", "1:18", "upper end"},
    {"negative noise", "output y real noise -1\n", "1:21", "greater than 0"},
    {"unterminated quote", "input \"abc real [0, 1]\n", "1:7", "unterminated quoted name"},
    {"unknown escape", "input \"a\\qb\" real [0, 1]\n", "1:9", "escape \\q"},
    {"empty quoted name", "input \"\" real [0, 1]\n", "1:7", "empty quoted name"},
    {"unknown character", "input x real [0, 1] @\n", "1:21", "character '@'"},
    {"columns count characters",
     "input \"\xc3\xa9\" real [0, 1]\ninput \"\xc3\xa9" "2\" real [2, 1]\n",
     "2:17", "inverted"},
    {"hold outside the range", "input x real [0, 1]\nhold x 5\n", "2:8", "outside the domain"},
    {"hold undeclared level", "input s levels {a, b}\nhold s c\n", "2:8", "does not declare"},
    {"hold bool not true/false", "input b bool\nhold b maybe\n", "2:8", "true or false"},
    {"hold integer not whole", "input n integer [0, 9]\nhold n 2.5\n", "2:8", "whole number"},
    {"hold an output", "output y real\nhold y 1\n", "2:6", "expected an input"},
    {"hold twice", "input x real [0, 1]\nhold x 0\nhold x 1\n", "3:6", "second 'hold'"},
    {"hold undeclared", "input speed real [0, 1]\nhold sped 1\n", "2:6", "did you mean 'speed'"},
    {"edge without an effect of interest", "input x real [0, 1]\noutput y real\n\nx -> y\n",
     "4:1", "without a smallest effect of interest"},
    {"bad expect", DECL_XY "x -> y expect 1\n", "5:15", "'+', '-', '?' or 'turning'"},
    {"zero effect", DECL_XY "x -> y effect 0\n", "5:15", "greater than 0"},
    {"negative effect", DECL_XY "x -> y effect -0.5\n", "5:15", "greater than 0"},
    {"trailing word after an edge", DECL_XY "x -> y sometimes\n", "5:8", "'sometimes'"},
    {"misspelt annotation", DECL_XY "x -> y efect 2\n", "5:8", "did you mean 'effect'?"},
    {"two effects", DECL_XY "x -> y effect 1 effect 2\n", "5:17", "second 'effect'"},
    {"name without an arrow", DECL_XY "x y\n", "5:3", "'->' or ','"},
    {"arrow without a target", DECL_XY "x ->\n", "5:5", "after '->'"},
    {"second default effect", "default effect 1\ndefault effect 2\n", "2:9", "second 'default"},
    {"default of something else", "default noise 1\n", "1:9", "'effect' or 'margin'"},
    {"design dependent", "design dependent\n", "1:8", "'independent'"},
    {"output with a range", "output y real [0, 1]\n", "1:15", "outputs take no range"},
    {"input without a range", "input x real\n", "1:13", "'['"},
    {"levels without braces on an input", "input s levels\n", "1:15", "'{'"},
    {"missing comma in a range", "input x real [0 1]\n", "1:17", "','"},
    {"extra words after a declaration", "input x bool yes\n", "1:14", "end of the line"},
};
#define N_BAD (sizeof bad_cases / sizeof bad_cases[0])

static void test_bad(void)
{
    for (size_t i = 0; i < N_BAD; i++) {
        const struct bad_case *b = &bad_cases[i];
        cov_graph *g = NULL;
        cov_error err = {{0}, {0}};
        int rc = cov_graph_parse_text("t.graph", b->text, &g, &err);
        char want[64];
        snprintf(want, sizeof want, "t.graph:%s", b->where);
        gsl_test_int(rc, COV_EINPUT, "graph bad input (%s): COV_EINPUT", b->what);
        gsl_test(strcmp(err.where, want) != 0, "graph bad input (%s): at %s (got %s: %s)", b->what,
                 want, err.where, err.msg);
        gsl_test(strstr(err.msg, b->says) == NULL || strstr(err.msg, "found") == NULL ||
                     strstr(err.msg, "expected") == NULL,
                 "graph bad input (%s): message says found/expected and '%s' (got '%s')", b->what,
                 b->says, err.msg);
        gsl_test(g != NULL, "graph bad input (%s): no graph returned", b->what);
        cov_graph_free(g);
    }
}

int main(void)
{
    gsl_set_error_handler_off();
    gsl_test_verbose(1);
    test_good();
    test_defaults();
    test_bad();
    return gsl_test_summary();
}
