/* shoal: the command-line driver. It parses the command line and dispatches; the work is in
 * coverage/ and power/. See LICENSE. */
#include <errno.h>
#include <getopt.h>
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/ioctl.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>
#if defined(__GLIBC__)
#include <malloc.h>
#endif

#include "coverage/coverage.h"

#define SHOAL_VERSION "0.1.0"
/* Columns when stdout is not a terminal or its width is unknown. */
#define TERM_WIDTH_DEFAULT 80

/* Exit statuses: the contract a pipeline gates on (README.md, "Exit status"). */
enum exit_code { EXIT_ADEQUATE = 0, EXIT_NOT_ADEQUATE = 1, EXIT_BAD_INPUT = 2 };

typedef int (*command_fn)(const cov_options *, FILE *, FILE *, int *, cov_error *);

/* The commands, as bits, so that each option can say where it applies. */
enum { C_CLAIMS = 1, C_IMPORT = 2, C_CHECK = 4, C_POWER = 8, C_COVERAGE = 16, C_SURVEY = 32,
       C_PLAN = 64, C_ALL = 127 };

struct command {
    const char *name;
    command_fn run;
    int bit;
    int min_args, max_args;     /* positional arguments after the command name */
    const char *synopsis;
    const char *what;           /* one line: what it answers */
};

static const struct command commands[] = {
    {"claims", cov_cmd_claims, C_CLAIMS, 1, 1, "claims GRAPH",
     "the effect and absence claims the graph implies, and their tests"},
    {"import", cov_cmd_import, C_IMPORT, 1, 1, "import FILE.csv --archive ARCHIVE.db [--again]",
     "append a CSV of runs to shoal's own SQLite archive as a new batch"},
    {"check", cov_cmd_check, C_CHECK, 2, 2, "check GRAPH ARCHIVE",
     "whether the archive holds every recorded variable inside its domain"},
    {"power", cov_cmd_power, C_POWER, 2, 2, "power GRAPH ARCHIVE",
     "power, minimum detectable effect and runs needed for every claim"},
    {"coverage", cov_cmd_coverage, C_COVERAGE, 2, 2, "coverage GRAPH ARCHIVE",
     "how much of the input space, its pairs and triples the runs cover"},
    {"survey", cov_cmd_survey, C_SURVEY, 2, 2, "survey GRAPH ARCHIVE [-o DIR]",
     "power and coverage in one pass, with plots, report and history"},
    {"plan", cov_cmd_plan, C_PLAN, 1, 2, "plan GRAPH [ARCHIVE] --budget N|auto [-o FILE]",
     "the next runs that bring the thin claims to the target at least cost"},
};
#define N_COMMANDS (sizeof commands / sizeof commands[0])

enum long_only {
    OPT_TABLE = 256, OPT_ARCHIVE, OPT_ALPHA, OPT_POWER, OPT_FAMILY, OPT_ONE_SIDED, OPT_MIN_RUNS,
    OPT_BINS, OPT_WAY, OPT_NEED_MARGINAL, OPT_NEED_PAIRWISE, OPT_NEED_THREEWAY, OPT_BUDGET,
    OPT_REPLICATES, OPT_SEED, OPT_HISTORY, OPT_PLAN, OPT_CSV, OPT_JSON, OPT_VERSION,
    OPT_RECORD_SNAPSHOT, OPT_JUNIT, OPT_AGAIN, OPT_THREADS, OPT_COST_COLUMN, OPT_COST_BUDGET,
    OPT_ROUNDS, OPT_TEST, OPT_POWER_BY, OPT_RESAMPLES
};

/* Every option: its long name, value, the commands it applies to, and its help line. */
struct option_doc {
    const char *name;
    int has_arg;
    int code;
    int applies;
    const char *arg;
    const char *help;
};

static const struct option_doc options[] = {
    {"table", 1, OPT_TABLE, C_ALL & ~C_CLAIMS, "NAME", "table of runs in the archive (default runs)"},
    {"archive", 1, OPT_ARCHIVE, C_IMPORT, "FILE", "the SQLite archive to append to"},
    {"alpha", 1, OPT_ALPHA, C_POWER | C_SURVEY | C_PLAN, "A",
     "family-wise significance level (default 0.05)"},
    {"power", 1, OPT_POWER, C_POWER | C_SURVEY | C_PLAN, "P", "target power (default 0.80)"},
    {"family", 1, OPT_FAMILY, C_POWER | C_SURVEY | C_PLAN, "bonferroni|none",
     "multiplicity correction (default bonferroni)"},
    {"one-sided", 0, OPT_ONE_SIDED, C_POWER | C_SURVEY | C_PLAN, NULL,
     "one-sided tests where the graph gives a sign"},
    {"test", 1, OPT_TEST, C_POWER | C_SURVEY | C_PLAN, "classic|robust",
     "OLS or HC3 standard errors (default robust)"},
    {"power-by", 1, OPT_POWER_BY, C_POWER | C_SURVEY | C_PLAN, "auto|formula|resampling",
     "normal formula or bootstrap (default auto: by noise)"},
    {"resamples", 1, OPT_RESAMPLES, C_POWER | C_SURVEY | C_PLAN, "B",
     "bootstrap replicates per claim (default 400)"},
    {"min-runs", 1, OPT_MIN_RUNS, C_COVERAGE | C_SURVEY | C_PLAN, "M",
     "runs that make a bin or cell covered (default 5)"},
    {"bins", 1, OPT_BINS, C_COVERAGE | C_SURVEY | C_PLAN, "B",
     "bins for a numeric input (default 10)"},
    {"way", 1, OPT_WAY, C_COVERAGE | C_SURVEY, "2|3",
     "highest strength (default 3 up to 20 inputs)"},
    {"need-marginal", 1, OPT_NEED_MARGINAL, C_COVERAGE | C_SURVEY, "S",
     "share of input bins the campaign must cover (0..1)"},
    {"need-pairwise", 1, OPT_NEED_PAIRWISE, C_COVERAGE | C_SURVEY, "S",
     "share of 2-way cells the campaign must cover (0..1)"},
    {"need-threeway", 1, OPT_NEED_THREEWAY, C_COVERAGE | C_SURVEY, "S",
     "share of 3-way cells the campaign must cover (0..1)"},
    {"budget", 1, OPT_BUDGET, C_PLAN, "N|auto", "runs to plan, or the fewest that reach the target"},
    {"replicates", 1, OPT_REPLICATES, C_PLAN, "K", "seeds per planned configuration (default 1)"},
    {"again", 0, OPT_AGAIN, C_IMPORT, NULL, "append a file whose rows the archive already holds"},
    {"cost-column", 1, OPT_COST_COLUMN, C_PLAN, "NAME",
     "cost column (default: graph's `ledger NAME cost`)"},
    {"cost-budget", 1, OPT_COST_BUDGET, C_PLAN, "C",
     "plan runs until their fitted cost would pass C"},
    {"rounds", 1, OPT_ROUNDS, C_PLAN, "K", "write the first of K batches; plan again after it"},
    {"seed", 1, OPT_SEED, C_POWER | C_COVERAGE | C_SURVEY | C_PLAN, "S",
     "seed for resampling, probes, subsamples, plan seeds"},
    {"threads", 1, OPT_THREADS, C_POWER | C_COVERAGE | C_SURVEY, "N",
     "threads for summaries, stages, claims (default 1)"},
    {"output", 1, 'o', C_SURVEY | C_PLAN, "PATH",
     "survey: report directory; plan: CSV file"},
    {"history", 1, OPT_HISTORY, C_SURVEY | C_PLAN, "FILE",
     "history side file for a read-only archive"},
    {"record-snapshot", 0, OPT_RECORD_SNAPSHOT, C_SURVEY, NULL,
     "record a snapshot even if the runs are unchanged"},
    {"plan", 1, OPT_PLAN, C_SURVEY, "FILE", "overlay the runs of a plan file on the plots"},
    {"junit", 1, OPT_JUNIT, C_SURVEY, "FILE",
     "also write JUnit XML (a case per claim and gate)"},
    {"csv", 0, OPT_CSV, C_CLAIMS | C_CHECK | C_POWER | C_COVERAGE | C_SURVEY, NULL,
     "CSV on standard output"},
    {"json", 0, OPT_JSON, C_ALL, NULL, "JSON on standard output"},
    {"quiet", 0, 'q', C_ALL, NULL, "print nothing; the exit status says it"},
    {"help", 0, 'h', C_ALL, NULL, "this help"},
    {"version", 0, OPT_VERSION, C_ALL, NULL, "the version"},
};
#define N_OPTIONS (sizeof options / sizeof options[0])

/* "  -o, --output PATH" and the like, for the help. */
static void option_line(FILE *f, const struct option_doc *d)
{
    char head[64];
    snprintf(head, sizeof head, "%s--%s%s%s", d->code == 'o' ? "-o, " : d->code == 'q' ? "-q, "
                                              : d->code == 'h' ? "-h, " : "",
             d->name, d->arg ? " " : "", d->arg ? d->arg : "");
    if (strlen(head) < 24) fprintf(f, "  %-24s %s\n", head, d->help);
    else fprintf(f, "  %s\n  %-24s %s\n", head, "", d->help);
}

static void usage(FILE *f)
{
    fprintf(f, "usage: shoal COMMAND [OPTIONS] ARGS\n\ncommands:\n");
    for (size_t i = 0; i < N_COMMANDS; i++)
        fprintf(f, "  %-9s %s\n", commands[i].name, commands[i].what);
    fprintf(f, "\nGRAPH or FILE.csv may be - for standard input.\n"
               "shoal help COMMAND (or shoal COMMAND --help) lists that command's options.\n"
               "\noptions of every command:\n");
    for (size_t k = 0; k < N_OPTIONS; k++)
        if (options[k].applies == C_ALL) option_line(f, &options[k]);
    fprintf(f, "\nexit status: 0 adequate, 1 not adequate, 2 bad input or usage\n");
}

static void command_help(FILE *f, const struct command *c)
{
    fprintf(f, "usage: shoal %s [OPTIONS]\n\n%s.\n\noptions:\n", c->synopsis, c->what);
    for (size_t k = 0; k < N_OPTIONS; k++)
        if (options[k].applies & c->bit) option_line(f, &options[k]);
    fprintf(f, "\nGRAPH or FILE.csv may be - for standard input.\n"
               "exit status: 0 adequate, 1 not adequate, 2 bad input or usage\n");
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
    case OPT_TEST:
        if (strcmp(arg, "classic") == 0) o->power.test = COV_TEST_CLASSIC;
        else if (strcmp(arg, "robust") == 0) o->power.test = COV_TEST_ROBUST;
        else {
            fprintf(stderr, "shoal: --test expects 'classic' or 'robust', got '%s'\n", arg);
            return -1;
        }
        return 0;
    case OPT_POWER_BY:
        if (strcmp(arg, "auto") == 0) o->power.power_by = COV_POWER_BY_AUTO;
        else if (strcmp(arg, "formula") == 0) o->power.power_by = COV_POWER_BY_FORMULA;
        else if (strcmp(arg, "resampling") == 0) o->power.power_by = COV_POWER_BY_RESAMPLING;
        else {
            fprintf(stderr, "shoal: --power-by expects 'auto', 'formula' or 'resampling', got "
                    "'%s'\n", arg);
            return -1;
        }
        return 0;
    case OPT_RESAMPLES:
        if (parse_long("--resamples", arg, 100, 20000, &k)) return -1;
        o->power.resample_reps = (size_t)k;
        return 0;
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
        o->power.resample_seed = (unsigned long)k + 1;
        return 0;
    case OPT_COST_COLUMN: o->cost_column = arg; return 0;
    case OPT_COST_BUDGET: return parse_double("--cost-budget", arg, 1e-300, 1e300, &o->cost_budget);
    case OPT_ROUNDS:
        if (parse_long("--rounds", arg, 1, 1000, &k)) return -1;
        o->rounds = (int)k;
        return 0;
    case OPT_THREADS:
        if (parse_long("--threads", arg, 1, 64, &k)) return -1;
        o->coverage.threads = o->power.threads = (int)k;
        return 0;
    case 'o': o->out_path = arg; return 0;
    case OPT_HISTORY: o->history_path = arg; return 0;
    case OPT_AGAIN: o->again = 1; return 0;
    case OPT_PLAN: o->plan_path = arg; return 0;
    case OPT_RECORD_SNAPSHOT: o->record_snapshot = 1; return 0;
    case OPT_JUNIT: o->junit_path = arg; return 0;
    case OPT_CSV:
    case OPT_JSON:
        if (o->format != COV_FMT_TABLE && o->format != (c == OPT_CSV ? COV_FMT_CSV : COV_FMT_JSON)) {
            fprintf(stderr, "shoal: --csv and --json conflict; choose one output format\n");
            return -1;
        }
        o->format = c == OPT_CSV ? COV_FMT_CSV : COV_FMT_JSON;
        return 0;
    case 'q': o->quiet = 1; return 0;
    default: return -1;
    }
}

static const struct command *find_command(const char *name)
{
    for (size_t i = 0; i < N_COMMANDS; i++)
        if (strcmp(name, commands[i].name) == 0) return &commands[i];
    return NULL;
}

static const struct option_doc *find_option(int code)
{
    for (size_t k = 0; k < N_OPTIONS; k++)
        if (options[k].code == code) return &options[k];
    return NULL;
}

/* Columns for terminal text: the terminal's width when stdout is one, else 80 (tables then fit
 * a log, a pipe or a mail). */
static size_t terminal_width(void)
{
    if (!isatty(STDOUT_FILENO)) return TERM_WIDTH_DEFAULT;
    struct winsize ws;
    if (ioctl(STDOUT_FILENO, TIOCGWINSZ, &ws) == 0 && ws.ws_col >= 40) return ws.ws_col;
    const char *cols = getenv("COLUMNS");
    long k;
    char *end;
    if (cols != NULL && (k = strtol(cols, &end, 10)) >= 40 && *end == '\0' && k < 10000)
        return (size_t)k;
    return TERM_WIDTH_DEFAULT;
}

/* Keep freed memory on the heap while shoal runs. The analysis makes and frees scratch of
 * megabytes per claim (a claim's rows, its treatment and configuration ids, its strata); glibc
 * serves blocks above an adaptive threshold with fresh mappings and gives freed heap back, so
 * every claim takes its page faults again, and first-touch faults are dear (several times a plain
 * write of the page, more on a virtual machine). Here blocks below 8 MiB (a million doubles) come
 * from the heap and freed heap stays for the next claim; larger blocks keep their own mappings,
 * which grow without a copy and leave no resident hole when freed. On an invented archive of a
 * million runs with a switch, a level set and shared seeds this takes the survey from 11.7 to
 * about 6 s of CPU with peak memory within 1% (tests/bench/bench_scale.sh); a 32 MB threshold
 * kept the 10,000,000-run archive's freed per-run flags resident (+20 MB at its peak, 1.21x its
 * raw columns), and taking every block from the heap kept its columns' holes (1.52x). */
static void keep_freed_memory(void)
{
#if defined(__GLIBC__)
    mallopt(M_MMAP_THRESHOLD, 8 * 1024 * 1024);
    mallopt(M_TRIM_THRESHOLD, INT_MAX);
#endif
}

int main(int argc, char **argv)
{
    gsl_set_error_handler_off();
    keep_freed_memory();
    if (argc < 2) {
        usage(stderr);
        return EXIT_BAD_INPUT;
    }
    if (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0 ||
        strcmp(argv[1], "help") == 0) {
        if (argc > 2 && strcmp(argv[1], "help") == 0) {
            const struct command *hc = find_command(argv[2]);
            if (hc == NULL) {
                fprintf(stderr, "shoal: unknown command '%s'; try 'shoal --help'\n", argv[2]);
                return EXIT_BAD_INPUT;
            }
            command_help(stdout, hc);
            return EXIT_ADEQUATE;
        }
        usage(stdout);
        return EXIT_ADEQUATE;
    }
    if (strcmp(argv[1], "--version") == 0) {
        printf("shoal %s\n", SHOAL_VERSION);
        return EXIT_ADEQUATE;
    }
    const struct command *cmd = find_command(argv[1]);
    if (cmd == NULL) {
        fprintf(stderr, "shoal: unknown command '%s'; try 'shoal --help'\n", argv[1]);
        return EXIT_BAD_INPUT;
    }

    static struct option long_options[N_OPTIONS + 1];
    for (size_t k = 0; k < N_OPTIONS; k++)
        long_options[k] = (struct option){options[k].name,
                                          options[k].has_arg ? required_argument : no_argument,
                                          NULL, options[k].code};
    cov_options o;
    cov_options_default(&o);
    o.version = SHOAL_VERSION;
    /* getopt_long permutes argv; the audit trail keeps the command line as it was typed. */
    /* Held by a static so that an early exit (usage errors) leaves nothing unreachable. */
    static char **volatile typed;   /* volatile: kept in memory, so LeakSanitizer sees it */
    typed = malloc(((size_t)argc + 1) * sizeof *typed);
    if (typed == NULL) {
        fprintf(stderr, "shoal: out of memory\n");
        return EXIT_BAD_INPUT;
    }
    memcpy(typed, argv, ((size_t)argc + 1) * sizeof *typed);
    o.argc = argc;
    o.argv = typed;
    int c;
    optind = 2;
    /* getopt's own messages (unknown option, missing value) start with argv[0]; the README
     * promises every message starts with "shoal:", whatever path the binary was run by. */
    static char prog_name[] = "shoal";
    char *const argv0 = argv[0];
    argv[0] = prog_name;
    while ((c = getopt_long(argc, argv, "o:qh", long_options, NULL)) != -1) {
        if (c == 'h') {
            command_help(stdout, cmd);
            return EXIT_ADEQUATE;
        }
        if (c == OPT_VERSION) {
            printf("shoal %s\n", SHOAL_VERSION);
            return EXIT_ADEQUATE;
        }
        const struct option_doc *d = c == '?' ? NULL : find_option(c);
        if (d != NULL && !(d->applies & cmd->bit)) {
            /* Accepting and ignoring it would let a user believe it took effect. */
            fprintf(stderr, "shoal: --%s does not apply to %s; see 'shoal help %s'\n", d->name,
                    cmd->name, cmd->name);
            return EXIT_BAD_INPUT;
        }
        if (c == '?' || apply_option(c, optarg, &o) != 0) {
            fprintf(stderr, "usage: shoal %s [OPTIONS]; see 'shoal help %s'\n", cmd->synopsis,
                    cmd->name);
            return EXIT_BAD_INPUT;
        }
        int seen = 0;
        for (size_t k = 0; k < o.n_given; k++) seen |= strcmp(o.given[k], d->name) == 0;
        if (!seen && o.n_given < sizeof o.given / sizeof o.given[0]) o.given[o.n_given++] = d->name;
    }
    argv[0] = argv0;
    int n_pos = argc - optind;
    if (n_pos < cmd->min_args || n_pos > cmd->max_args) {
        fprintf(stderr, "shoal: %s takes %d%s argument%s\nusage: shoal %s [OPTIONS]\n", cmd->name,
                cmd->min_args, cmd->max_args > cmd->min_args ? " or more" : "",
                cmd->max_args == 1 ? "" : "s", cmd->synopsis);
        return EXIT_BAD_INPUT;
    }
    if (cmd->bit == C_IMPORT) {
        o.csv_path = argv[optind];
        if (o.archive_path == NULL) {
            fprintf(stderr, "shoal: import needs --archive FILE.db\nusage: shoal %s\n",
                    cmd->synopsis);
            return EXIT_BAD_INPUT;
        }
    } else {
        o.graph_path = argv[optind];
        if (n_pos > 1) o.archive_path = argv[optind + 1];
        if (o.archive_path != NULL && strcmp(o.archive_path, "-") == 0) {
            fprintf(stderr, "shoal: the archive is an SQLite file and cannot be standard input; "
                            "import a CSV from - first\n");
            return EXIT_BAD_INPUT;
        }
    }
    o.progress = isatty(STDERR_FILENO);
    /* The NO_COLOR convention: only a non-empty value turns colour off. */
    const char *no_color = getenv("NO_COLOR");
    o.color = isatty(STDOUT_FILENO) && (no_color == NULL || no_color[0] == '\0');
    o.width = terminal_width();

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
