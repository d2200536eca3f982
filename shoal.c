/* shoal: the command-line driver. It parses the command line and dispatches; the work is in
 * coverage/ and power/. See LICENSE. */
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>

#include "coverage/coverage.h"

#define SHOAL_VERSION "0.1.0"

/* Exit statuses: the contract a pipeline gates on (README.md, "Exit status"). */
enum exit_code { EXIT_ADEQUATE = 0, EXIT_NOT_ADEQUATE = 1, EXIT_BAD_INPUT = 2 };

typedef int (*command_fn)(const cov_options *, FILE *, FILE *, int *, cov_error *);

struct command {
    const char *name;
    command_fn run;
    int min_args, max_args;     /* positional arguments after the command name */
    const char *synopsis;
};

static const struct command commands[] = {
    {"claims", cov_cmd_claims, 1, 1, "claims GRAPH [--csv|--json]"},
    {"import", cov_cmd_import, 1, 1,
     "import FILE.csv --archive ARCHIVE.db [--table NAME] [--again]"},
    {"check", cov_cmd_check, 2, 2, "check GRAPH ARCHIVE [--table NAME] [--csv|--json]"},
    {"power", cov_cmd_power, 2, 2,
     "power GRAPH ARCHIVE [--alpha A] [--power P] [--family bonferroni|none] [--one-sided]"},
    {"coverage", cov_cmd_coverage, 2, 2,
     "coverage GRAPH ARCHIVE [--min-runs M] [--bins B] [--way 2|3] [--need-pairwise S]"},
    {"survey", cov_cmd_survey, 2, 2,
     "survey GRAPH ARCHIVE [-o DIR] [--history FILE] [--plan FILE] [--json] [--quiet]"},
    {"plan", cov_cmd_plan, 1, 2, "plan GRAPH [ARCHIVE] --budget N|auto [-o FILE] [--replicates K]"},
};
#define N_COMMANDS (sizeof commands / sizeof commands[0])

static void usage(FILE *f)
{
    fprintf(f, "usage: shoal COMMAND [OPTIONS] ARGS\n\ncommands:\n");
    for (size_t i = 0; i < N_COMMANDS; i++)
        fprintf(f, "  shoal %s\n", commands[i].synopsis);
    fprintf(f,
            "\noptions:\n"
            "  --table NAME          table of runs in the archive (default runs)\n"
            "  --archive FILE        import: the SQLite archive to append to\n"
            "  --alpha A             family-wise significance level (default 0.05)\n"
            "  --power P             target power (default 0.80)\n"
            "  --family bonferroni|none   multiplicity correction (default bonferroni)\n"
            "  --one-sided           one-sided tests where the graph gives a sign\n"
            "  --min-runs M          runs that make a bin or cell covered (default 5)\n"
            "  --bins B              bins for a numeric input (default 10)\n"
            "  --way 2|3             highest combination strength (default 3 up to 20 inputs)\n"
            "  --need-marginal S, --need-pairwise S, --need-threeway S\n"
            "                        coverage shares the campaign must reach (0..1)\n"
            "  --budget N|auto       plan: runs to plan, or the fewest that reach the target\n"
            "  --replicates K        plan: seeds per planned configuration (default 1)\n"
            "  --again               import: append a file whose rows the archive already holds\n"
            "  --cost-column NAME    plan: the cost column (default: the graph's `ledger NAME cost`)\n"
            "  --cost-budget C       plan: plan runs until their fitted cost would pass C\n"
            "  --rounds K            plan: write the first of K batches; plan again after it\n"
            "  --seed S              seed for subsampling, probes and planned seeds\n"
            "  --threads N           threads for the shared summaries (default 1; same results)\n"
            "  -o, --output PATH     survey: report directory; plan: CSV file\n"
            "  --history FILE        survey: history side file for a read-only archive\n"
            "  --plan FILE           survey: overlay the runs of a plan file on the plots\n"
            "  --csv, --json         machine-readable output\n"
            "  -q, --quiet           print nothing; the exit status says it\n"
            "  -h, --help, --version\n"
            "\nexit status: 0 adequate, 1 not adequate, 2 bad input or usage\n");
}

/* Parse a number the whole of which must be used, with the reader every input file uses. */
static int parse_double(const char *opt, const char *text, double lo, double hi, double *out)
{
    double v;
    if (cov_parse_double(text, &v) != 0 || v < lo || v > hi) {
        fprintf(stderr, "shoal: %s expects a number from %g to %g, got '%s'\n", opt, lo, hi, text);
        return -1;
    }
    *out = v;
    return 0;
}

static int parse_long(const char *opt, const char *text, long lo, long hi, long *out)
{
    char *end = NULL;
    errno = 0;
    long v = strtol(text, &end, 10);
    if (errno != 0 || end == text || *end != '\0' || v < lo || v > hi) {
        fprintf(stderr, "shoal: %s expects a whole number from %ld to %ld, got '%s'\n", opt, lo,
                hi, text);
        return -1;
    }
    *out = v;
    return 0;
}

enum long_only {
    OPT_TABLE = 256, OPT_ARCHIVE, OPT_ALPHA, OPT_POWER, OPT_FAMILY, OPT_ONE_SIDED, OPT_MIN_RUNS,
    OPT_BINS, OPT_WAY, OPT_NEED_MARGINAL, OPT_NEED_PAIRWISE, OPT_NEED_THREEWAY, OPT_BUDGET,
    OPT_REPLICATES, OPT_AGAIN, OPT_SEED, OPT_THREADS, OPT_HISTORY, OPT_PLAN, OPT_CSV, OPT_JSON,
    OPT_VERSION, OPT_COST_COLUMN, OPT_COST_BUDGET, OPT_ROUNDS
};

static const struct option long_options[] = {
    {"table", required_argument, NULL, OPT_TABLE},
    {"archive", required_argument, NULL, OPT_ARCHIVE},
    {"alpha", required_argument, NULL, OPT_ALPHA},
    {"power", required_argument, NULL, OPT_POWER},
    {"family", required_argument, NULL, OPT_FAMILY},
    {"one-sided", no_argument, NULL, OPT_ONE_SIDED},
    {"min-runs", required_argument, NULL, OPT_MIN_RUNS},
    {"bins", required_argument, NULL, OPT_BINS},
    {"way", required_argument, NULL, OPT_WAY},
    {"need-marginal", required_argument, NULL, OPT_NEED_MARGINAL},
    {"need-pairwise", required_argument, NULL, OPT_NEED_PAIRWISE},
    {"need-threeway", required_argument, NULL, OPT_NEED_THREEWAY},
    {"budget", required_argument, NULL, OPT_BUDGET},
    {"replicates", required_argument, NULL, OPT_REPLICATES},
    {"cost-column", required_argument, NULL, OPT_COST_COLUMN},
    {"cost-budget", required_argument, NULL, OPT_COST_BUDGET},
    {"rounds", required_argument, NULL, OPT_ROUNDS},
    {"seed", required_argument, NULL, OPT_SEED},
    {"again", no_argument, NULL, OPT_AGAIN},
    {"threads", required_argument, NULL, OPT_THREADS},
    {"output", required_argument, NULL, 'o'},
    {"history", required_argument, NULL, OPT_HISTORY},
    {"plan", required_argument, NULL, OPT_PLAN},
    {"csv", no_argument, NULL, OPT_CSV},
    {"json", no_argument, NULL, OPT_JSON},
    {"quiet", no_argument, NULL, 'q'},
    {"help", no_argument, NULL, 'h'},
    {"version", no_argument, NULL, OPT_VERSION},
    {NULL, 0, NULL, 0},
};

/* Apply one parsed option to o; returns -1 after printing a usage error. */
static int apply_option(int c, const char *arg, cov_options *o)
{
    double x;
    long k;
    switch (c) {
    case OPT_TABLE: o->table = arg; return 0;
    case OPT_ARCHIVE: o->archive_path = arg; return 0;
    case OPT_ALPHA:
        if (parse_double("--alpha", arg, 1e-12, 0.5, &x)) return -1;
        o->power.alpha = x;
        return 0;
    case OPT_POWER:
        if (parse_double("--power", arg, 0.01, 0.999999, &x)) return -1;
        o->power.target = x;
        return 0;
    case OPT_FAMILY:
        if (strcmp(arg, "bonferroni") == 0) o->power.bonferroni = 1;
        else if (strcmp(arg, "none") == 0) o->power.bonferroni = 0;
        else {
            fprintf(stderr, "shoal: --family expects 'bonferroni' or 'none', got '%s'\n", arg);
            return -1;
        }
        return 0;
    case OPT_ONE_SIDED: o->power.one_sided = 1; return 0;
    case OPT_MIN_RUNS:
        if (parse_long("--min-runs", arg, 1, 1000000, &k)) return -1;
        o->coverage.min_runs = (size_t)k;
        return 0;
    case OPT_BINS:
        if (parse_long("--bins", arg, 2, 1000, &k)) return -1;
        o->coverage.bins = (size_t)k;
        return 0;
    case OPT_WAY:
        if (parse_long("--way", arg, 2, 3, &k)) return -1;
        o->coverage.way = (int)k;
        return 0;
    case OPT_NEED_MARGINAL: return parse_double("--need-marginal", arg, 0, 1, &o->need_marginal);
    case OPT_NEED_PAIRWISE: return parse_double("--need-pairwise", arg, 0, 1, &o->need_pairwise);
    case OPT_NEED_THREEWAY: return parse_double("--need-threeway", arg, 0, 1, &o->need_threeway);
    case OPT_BUDGET:
        if (strcmp(arg, "auto") == 0) {
            o->budget = -1;
            return 0;
        }
        if (parse_long("--budget", arg, 0, 100000000, &k)) return -1;
        o->budget = k;
        return 0;
    case OPT_REPLICATES:
        if (parse_long("--replicates", arg, 1, 100000, &k)) return -1;
        o->replicates = (int)k;
        return 0;
    case OPT_SEED:
        if (parse_long("--seed", arg, 0, 2147483647L, &k)) return -1;
        o->coverage.seed = (unsigned long)k;
        o->seed_given = 1;
        return 0;
    case OPT_COST_COLUMN: o->cost_column = arg; return 0;
    case OPT_COST_BUDGET: return parse_double("--cost-budget", arg, 1e-300, 1e300, &o->cost_budget);
    case OPT_ROUNDS:
        if (parse_long("--rounds", arg, 1, 1000, &k)) return -1;
        o->rounds = (int)k;
        return 0;
    case OPT_THREADS:
        if (parse_long("--threads", arg, 1, 64, &k)) return -1;
        o->coverage.threads = (int)k;
        return 0;
    case 'o': o->out_path = arg; return 0;
    case OPT_HISTORY: o->history_path = arg; return 0;
    case OPT_AGAIN: o->again = 1; return 0;
    case OPT_PLAN: o->plan_path = arg; return 0;
    case OPT_CSV: o->format = COV_FMT_CSV; return 0;
    case OPT_JSON: o->format = COV_FMT_JSON; return 0;
    case 'q': o->quiet = 1; return 0;
    default: return -1;
    }
}

int main(int argc, char **argv)
{
    gsl_set_error_handler_off();
    if (argc < 2) {
        usage(stderr);
        return EXIT_BAD_INPUT;
    }
    if (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0 ||
        strcmp(argv[1], "help") == 0) {
        usage(stdout);
        return EXIT_ADEQUATE;
    }
    if (strcmp(argv[1], "--version") == 0) {
        printf("shoal %s\n", SHOAL_VERSION);
        return EXIT_ADEQUATE;
    }
    const struct command *cmd = NULL;
    for (size_t i = 0; i < N_COMMANDS; i++)
        if (strcmp(argv[1], commands[i].name) == 0) cmd = &commands[i];
    if (cmd == NULL) {
        fprintf(stderr, "shoal: unknown command '%s'; try 'shoal --help'\n", argv[1]);
        return EXIT_BAD_INPUT;
    }

    cov_options o;
    cov_options_default(&o);
    int c;
    optind = 2;
    /* getopt's own messages (unknown option, missing value) start with argv[0]; the README
     * promises every message starts with "shoal:", whatever path the binary was run by. */
    static char prog_name[] = "shoal";
    argv[0] = prog_name;
    while ((c = getopt_long(argc, argv, "o:qh", long_options, NULL)) != -1) {
        if (c == 'h') {
            usage(stdout);
            return EXIT_ADEQUATE;
        }
        if (c == OPT_VERSION) {
            printf("shoal %s\n", SHOAL_VERSION);
            return EXIT_ADEQUATE;
        }
        if (c == '?' || apply_option(c, optarg, &o) != 0) {
            fprintf(stderr, "usage: shoal %s\n", cmd->synopsis);
            return EXIT_BAD_INPUT;
        }
    }
    int n_pos = argc - optind;
    if (n_pos < cmd->min_args || n_pos > cmd->max_args) {
        fprintf(stderr, "shoal: %s takes %d%s argument%s\nusage: shoal %s\n", cmd->name,
                cmd->min_args, cmd->max_args > cmd->min_args ? " or more" : "",
                cmd->max_args == 1 ? "" : "s", cmd->synopsis);
        return EXIT_BAD_INPUT;
    }
    if (strcmp(cmd->name, "import") == 0) {
        o.csv_path = argv[optind];
        if (o.archive_path == NULL) {
            fprintf(stderr, "shoal: import needs --archive FILE.db\nusage: shoal %s\n",
                    cmd->synopsis);
            return EXIT_BAD_INPUT;
        }
    } else {
        o.graph_path = argv[optind];
        if (n_pos > 1) o.archive_path = argv[optind + 1];
    }
    o.progress = isatty(STDERR_FILENO);
    o.color = isatty(STDOUT_FILENO) && getenv("NO_COLOR") == NULL;

    cov_error err = {{0}, {0}};
    int adequate = 1;
    /* Names from the graph and the archive reach the tables: their control characters are shown
     * as escapes (JSON escapes its own; CSV only when it goes to a terminal). */
    FILE *out = stdout, *filtered = NULL;
    if (o.format == COV_FMT_TABLE || (o.format == COV_FMT_CSV && isatty(STDOUT_FILENO))) {
        filtered = cov_term_filter_open(stdout);
        if (filtered == NULL) {
            fprintf(stderr, "shoal: out of memory\n");
            return EXIT_BAD_INPUT;
        }
        out = filtered;
    }
    int rc = cmd->run(&o, out, stderr, &adequate, &err);
    int bad_out = filtered != NULL && fclose(filtered) != 0;
    if ((fflush(stdout) != 0 || bad_out) && rc == COV_OK) {
        fprintf(stderr, "shoal: could not write the output: %s\n", strerror(errno));
        return EXIT_BAD_INPUT;
    }
    if (rc != COV_OK) {
        fputs("shoal: ", stderr);
        if (err.where[0] != '\0') {
            cov_term_text(stderr, err.where);
            fputs(": ", stderr);
        }
        cov_term_text(stderr, err.msg[0] ? err.msg : "failed");
        fputc('\n', stderr);
        return EXIT_BAD_INPUT;
    }
    return adequate ? EXIT_ADEQUATE : EXIT_NOT_ADEQUATE;
}
