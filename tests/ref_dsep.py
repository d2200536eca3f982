# Cross-check of `shoal claims --json` against networkx 2.8.8 (nx.d_separated) on random DAGs.
# See LICENSE.

# Source of truth: networkx 2.8.8 `d_separated` (Debian python3-networkx), which tests
# d-separation by pruning leaves and checking weak connectivity (Darwiche 2009). The claim
# definitions checked here are those of README.md "Claims". Every comparison is exact (sets and
# booleans), so there is no tolerance. Fixed seed: the graphs are the same on every run.
import itertools
import json
import os
import random
import subprocess
import sys
import tempfile

import networkx as nx

SEED = 20261202
N_SMALL = 520          # graphs of 3..12 nodes: exhaustive subset checks are affordable
N_LARGE = 60           # graphs of 13..22 nodes: separation and single-removal minimality only
BRUTE_MAX_NODES = 12   # the brief's limit for brute force over all subsets
DESIGN = "__design__"  # our own node for the campaign's design; no graph name can collide with it
NOISE = "__run_noise__"  # our own node for the run's random stream, shared by outputs by default

shoal = os.environ.get("SHOAL", "build/shoal")
failures = []          # (category, message)
counts = {"graphs": 0, "claims": 0, "testable": 0, "untestable": 0, "brute": 0, "subset": 0,
          "preferred": 0, "noise_modes": set(), "rests": 0}


def fail(msg, cat="claims"):
    failures.append((cat, msg))


def quote(name):
    if name.startswith("v") and name[1:].isdigit():
        return name
    return '"' + name.replace("\\", "\\\\").replace('"', '\\"') + '"'


def make_graph(rng, n):
    """A random DAG: a random topological order, edges forward with probability p; declared in
    another random order, so that declaration order and causal order differ."""
    p = rng.choice([0.2, 0.3, 0.45])
    topo = list(range(n))
    rng.shuffle(topo)
    edges = [(topo[i], topo[j]) for i in range(n) for j in range(i + 1, n) if rng.random() < p]
    parents = {v: [a for a, b in edges if b == v] for v in range(n)}
    names = []
    for v in range(n):
        if rng.random() < 0.08:
            names.append('v %d; "q"' % v)      # quoted names with a space, ';' and quotes
        else:
            names.append("v%d" % v)
    role = {}
    for v in range(n):
        r = rng.random()
        if not parents[v]:
            role[v] = "input" if r < 0.5 else ("hidden" if r < 0.7 else "output")
        else:
            role[v] = "hidden" if r < 0.25 else "output"
    decl = list(range(n))
    rng.shuffle(decl)
    return edges, names, role, decl


def noise_sharing(n, role, noise):
    """The outputs that share the run's noise: all of them by default, none with `noise
    independent`, the others with `noise independent NAME, ...`. One alone shares nothing."""
    if noise == "all":
        return set()
    shared = {v for v in range(n) if role[v] == "output" and v not in noise}
    return shared if len(shared) >= 2 else set()


def write_graph(path, rng, edges, names, role, decl, independent, noise=None):
    lines = ["# Invented random graph for the d-separation cross-check."]
    types = {}
    for v in decl:
        if role[v] == "input":
            t = rng.choice(["real [0, 1]", "integer [1, 9]", "bool", "levels {lo, mid, hi}"])
        elif role[v] == "output":
            t = rng.choice(["real", "real noise 2.5", "integer", "bool"])
        else:
            t = "real"
        types[v] = t
        lines.append("%s %s %s" % (role[v], quote(names[v]), t))
    lines.append("default effect 0.2 sd")
    lines.append("default margin 0.05 sd")
    if independent:
        lines.append("design independent")
    if noise == "all":
        lines.append("noise independent")
    elif noise:
        lines.append("noise independent " + ", ".join(quote(names[v]) for v in sorted(noise)))
    # Edges: grouped by target as comma lists ("a, b -> t") or one per line, in a random order;
    # the written order is the expected order of effect claims.
    order = []
    by_target = {}
    for a, b in edges:
        by_target.setdefault(b, []).append(a)
    targets = list(by_target)
    rng.shuffle(targets)
    effects = {}
    for t in targets:
        srcs = by_target[t]
        rng.shuffle(srcs)
        ann = ""
        eff = None
        if rng.random() < 0.3:
            eff = round(rng.uniform(0.1, 3), 2)
            ann = " expect + effect %g" % eff
        if rng.random() < 0.5:
            lines.append("%s -> %s%s" % (", ".join(quote(names[s]) for s in srcs),
                                         quote(names[t]), ann))
            order += [(s, t) for s in srcs]
            for s in srcs:
                effects[(s, t)] = eff
        else:
            for s in srcs:
                lines.append("%s -> %s%s" % (quote(names[s]), quote(names[t]), ann))
                order.append((s, t))
                effects[(s, t)] = eff
    with open(path, "w", encoding="utf-8") as f:
        f.write("\n".join(lines) + "\n")
    return order, effects


def topo_rank(n, edges, decl):
    """Kahn's algorithm taking the earliest-declared ready node first."""
    pos = {v: i for i, v in enumerate(decl)}
    indeg = {v: 0 for v in range(n)}
    for _, b in edges:
        indeg[b] += 1
    done, rank = set(), {}
    for r in range(n):
        ready = [v for v in range(n) if v not in done and indeg[v] == 0]
        v = min(ready, key=lambda u: pos[u])
        done.add(v)
        rank[v] = r
        for a, b in edges:
            if a == v:
                indeg[b] -= 1
    return rank


def expected_claims(n, order, edges, role, decl, shared=frozenset()):
    rec = lambda v: role[v] != "hidden"
    out = [("effect", a, b) for a, b in order if rec(a) and rec(b)]
    rank = topo_rank(n, edges, decl)
    adj = set(edges) | {(b, a) for a, b in edges}
    for y in decl:
        if role[y] != "output":
            continue
        for x in decl:
            if x == y or not rec(x) or (x, y) in adj:
                continue
            if role[x] == "output" and rank[x] > rank[y]:
                continue
            if x in shared and y in shared:
                continue       # two outputs sharing run noise: no absence claim is derived
            out.append(("absence", x, y))
    return out


def proper_subsets(s):
    s = sorted(s)
    for k in range(len(s)):
        for sub in itertools.combinations(s, k):
            yield set(sub)


def check_graph(idx, tmp, rng, n, forced=None):
    if forced is None:
        edges, names, role, decl = make_graph(rng, n)
        independent = rng.random() < 0.4
        # Run noise: shared by every output (the default), declared independent for all, or for
        # a random subset of the outputs.
        outs = [v for v in range(n) if role[v] == "output"]
        r = rng.random()
        noise = None if r < 0.5 else ("all" if r < 0.7 else
                                      {v for v in outs if rng.random() < 0.5} or None)
    else:
        edges, names, role, decl, independent, noise = forced
    counts["noise_modes"].add("shared" if noise is None else ("all" if noise == "all"
                                                              else "named"))
    shared = noise_sharing(n, role, noise or set())
    path = os.path.join(tmp, "g%03d.graph" % idx)
    order, effects = write_graph(path, rng, edges, names, role, decl, independent, noise)
    try:
        res = subprocess.run([shoal, "claims", "--json", path], capture_output=True, text=True)
    except OSError as e:
        fail("%s: cannot run %s: %s" % (path, shoal, e))
        return
    if res.returncode != 0:
        fail("%s: exit %d: %s" % (path, res.returncode, res.stderr.strip()))
        return None
    doc = json.loads(res.stdout)
    counts["graphs"] += 1
    G = nx.DiGraph()
    G.add_nodes_from(names)
    G.add_edges_from((names[a], names[b]) for a, b in edges)
    if not independent:
        G.add_edges_from((DESIGN, names[v]) for v in range(n) if role[v] == "input")
    G.add_edges_from((NOISE, names[v]) for v in shared)
    by_name = {names[v]: v for v in range(n)}
    recorded = {names[v] for v in range(n) if role[v] != "hidden"}
    inputs = {names[v] for v in range(n) if role[v] == "input"}
    want = [(k, names[a], names[b])
            for k, a, b in expected_claims(n, order, edges, role, decl, shared)]
    got = [(c["kind"], c["treatment"], c["outcome"]) for c in doc["claims"]]
    if got != want:
        fail("%s: claims differ from the definitions: got %s, expected %s" % (path, got, want))
        return None
    for c in doc["claims"]:
        counts["claims"] += 1
        x, y, S = c["treatment"], c["outcome"], set(c["adjustment_set"])
        M = set(c["minimal_adjustment_set"])
        bx, by = by_name[x], by_name[y]
        rests = role[bx] == "output" and not (bx in shared and by in shared)
        counts["rests"] += rests
        if c["rests_on_noise_independence"] != rests:
            fail("%s: %s %s->%s rests_on_noise_independence %s, expected %s" % (
                path, c["kind"], x, y, c["rests_on_noise_independence"], rests))
        H = G.copy()
        if c["kind"] == "effect":
            H.remove_edge(x, y)
            e = effects[(by_name[x], by_name[y])]
            want_eff, want_unit = (e, "raw") if e is not None else (0.2, "sd")
            want_sign = 1 if e is not None else 0
        else:
            want_eff, want_unit, want_sign = 0.05, "sd", 0
        if (c["effect_of_interest"], c["effect_unit"], c["sign"]) != (want_eff, want_unit,
                                                                     want_sign):
            fail("%s: %s %s->%s effect %s %s sign %s, expected %s %s %s" % (
                path, c["kind"], x, y, c["effect_of_interest"], c["effect_unit"], c["sign"],
                want_eff, want_unit, want_sign))
        if c["status"] == "testable":
            counts["testable"] += 1
            if not (S | M) <= recorded - {x, y}:
                fail("%s: %s %s->%s sets %s, %s hold unrecorded names" % (path, c["kind"], x, y,
                                                                          S, M))
                continue
            # The set the test adjusts for separates.
            if not nx.d_separated(H, {x}, {y}, S):
                fail("%s: %s %s->%s: %s does not d-separate" % (path, c["kind"], x, y, S), "sep")
                continue
            # It is the preferred set (parents of the outcome, or of both ends, in H: with the
            # design node unless `design independent`) whenever all of that is recorded.
            pref = set(H.predecessors(y)) - {x}
            if c["kind"] == "absence":
                pref |= set(H.predecessors(x)) - {y}
            if pref <= recorded:
                counts["preferred"] += 1
                if S != pref:
                    fail("%s: %s %s->%s: adjusts for %s, expected the recorded parents %s" % (
                        path, c["kind"], x, y, S, pref), "pref")
            elif S != M:
                fail("%s: %s %s->%s: adjusts for %s, expected the minimal set %s when a parent "
                     "is hidden" % (path, c["kind"], x, y, S, M), "pref")
            # The minimal set separates, no single member can be dropped, and it lies within the
            # adjusted set.
            if not M <= S:
                fail("%s: %s %s->%s: minimal %s is not within %s" % (path, c["kind"], x, y, M, S),
                     "sep")
            if not nx.d_separated(H, {x}, {y}, M):
                fail("%s: %s %s->%s: minimal %s does not d-separate" % (path, c["kind"], x, y, M),
                     "sep")
                continue
            for z in M:
                if nx.d_separated(H, {x}, {y}, M - {z}):
                    fail("%s: %s %s->%s: %s is not minimal (drop %s)" % (path, c["kind"], x, y,
                                                                         M, z), "sep")
            if n <= BRUTE_MAX_NODES:
                counts["subset"] += 1
                for sub in proper_subsets(M):
                    if nx.d_separated(H, {x}, {y}, sub):
                        fail("%s: %s %s->%s: proper subset %s of %s separates" % (
                            path, c["kind"], x, y, sub, M), "subset")
                        break
            if c["steerable"] != (S <= inputs):
                fail("%s: %s %s->%s steerable %s for %s" % (path, c["kind"], x, y,
                                                            c["steerable"], S))
            if c["reason"] is not None:
                fail("%s: testable claim with a reason" % path)
        else:
            counts["untestable"] += 1
            if S or M:
                fail("%s: untestable claim with sets %s, %s" % (path, S, M))
            r = c["reason"] or ""
            hidden_named = any(names[v] in r for v in range(n) if role[v] == "hidden") or \
                "[design]" in r or "[run noise]" in r
            if not r.startswith("open path ") or not hidden_named:
                fail("%s: %s %s->%s: reason %r names no open path through a hidden variable" %
                     (path, c["kind"], x, y, r))
            cand = sorted(recorded - {x, y})
            if n <= BRUTE_MAX_NODES:
                counts["brute"] += 1
                for k in range(len(cand) + 1):
                    hit = next((s for s in itertools.combinations(cand, k)
                                if nx.d_separated(H, {x}, {y}, set(s))), None)
                    if hit is not None:
                        fail("%s: %s %s->%s reported untestable but %s separates" % (
                            path, c["kind"], x, y, set(hit)), "brute")
                        break
            else:
                # Largest candidate: recorded ancestors (van der Zander et al. 2019: if any
                # recorded separator exists, this one does).
                anc = nx.ancestors(H, x) | nx.ancestors(H, y)
                if nx.d_separated(H, {x}, {y}, set(cand) & anc):
                    fail("%s: %s %s->%s reported untestable but recorded ancestors separate" %
                         (path, c["kind"], x, y))
    return doc


def three_by_three(tmp, rng):
    """Three inputs, three outputs, no output-output edge (invented): shared run noise gives no
    output-output absence claim; `noise independent` gives all three, each pinned by networkx
    through check_graph."""
    names = ["in_a", "in_b", "in_c", "out_x", "out_y", "out_z"]
    role = {0: "input", 1: "input", 2: "input", 3: "output", 4: "output", 5: "output"}
    edges = [(0, 3), (1, 4), (2, 5), (0, 4)]
    decl = list(range(6))
    results = {}
    for mode, noise in (("shared", None), ("independent", "all")):
        doc = check_graph(900 + len(results), tmp, rng, 6,
                          (edges, names, role, decl, False, noise))
        pairs = set()
        for c in (doc or {}).get("claims", []):
            if c["kind"] == "absence" and c["treatment"].startswith("out_"):
                pairs.add((c["treatment"], c["outcome"]))
        results[mode] = (doc is not None, pairs)
    ok_shared = results["shared"][0] and not results["shared"][1]
    want = {("out_x", "out_y"), ("out_x", "out_z"), ("out_y", "out_z")}
    ok_indep = results["independent"][0] and results["independent"][1] == want
    print("%s: 3 inputs, 3 outputs, shared run noise: %d output-output absence claims (expected "
          "0; separation checked against networkx)" % ("PASS" if ok_shared else "FAIL",
                                                       len(results["shared"][1])))
    print("%s: the same graph with 'noise independent': output-output absence claims %s "
          "(expected %s; each one's sets checked against networkx d_separated)" % (
              "PASS" if ok_indep else "FAIL", sorted(results["independent"][1]), sorted(want)))
    return ok_shared and ok_indep


def main():
    rng = random.Random(SEED)
    with tempfile.TemporaryDirectory() as tmp:
        for i in range(N_SMALL):
            check_graph(i, tmp, rng, rng.randint(3, BRUTE_MAX_NODES))
        for i in range(N_LARGE):
            check_graph(N_SMALL + i, tmp, rng, rng.randint(13, 22))
        ok33 = three_by_three(tmp, rng)
    src = "(source: networkx %s d_separated)" % nx.__version__
    for cat, m in failures[:25]:
        print("FAIL: %s %s" % (m, src))
    bad = {cat for cat, _ in failures}
    ok = not failures
    total = N_SMALL + N_LARGE + 2   # and the two runs of three_by_three
    verdict = lambda cat, n: "PASS" if cat not in bad and n > 0 else "FAIL"
    print("%s: %d of %d random graphs parsed and gave the claims the definitions imply (kinds, "
          "pairs, order, effects, steerable) %s" % (
              verdict("claims", counts["graphs"] == total), counts["graphs"], total, src))
    print("%s: %d testable claims: adjustment_set and minimal_adjustment_set each d-separate, the "
          "minimal set lies within adjustment_set and no single member of it can be dropped %s"
          % (verdict("sep", counts["testable"]), counts["testable"], src))
    print("%s: %d testable claims whose preferred parent set is all recorded adjust for exactly "
          "that set, the others for the minimal set %s" % (verdict("pref", counts["preferred"]), counts["preferred"], src))
    print("%s: %d testable claims on <= %d nodes: no proper subset of minimal_adjustment_set "
          "separates %s" % (
        verdict("subset", counts["subset"]), counts["subset"], BRUTE_MAX_NODES, src))
    print("%s: %d untestable claims on <= %d nodes confirmed by brute force over all subsets of "
          "recorded variables %s" % (verdict("brute", counts["brute"]), counts["brute"],
                                     BRUTE_MAX_NODES, src))
    modes = counts["noise_modes"] >= {"shared", "all", "named"}
    print("%s: run noise drawn shared, independent for all and for named outputs (%s); %d claims "
          "rest on the declaration that two outputs' noise is independent %s" % (
              "PASS" if modes and counts["rests"] > 0 else "FAIL",
              ", ".join(sorted(counts["noise_modes"])), counts["rests"], src))
    print("%s: %d failures among %d claims in all" % ("PASS" if ok else "FAIL", len(failures),
                                                       counts["claims"]))
    return 0 if ok and ok33 and modes else 1


if __name__ == "__main__":
    sys.exit(main())
