# Sourced by tests/cli_browser.sh: writes "$1/wide.graph" and "$1/wide.csv", an invented campaign
# (seed 5; no real system behind it) with long variable names and 60 claims, for the report's
# layout at 1,400 px. Needs $PYTHON. See LICENSE.
wide_campaign() {
  "$PYTHON" - "$1/wide.graph" "$1/wide.csv" <<'PY'
import random, sys
graph, runs = sys.argv[1:]
inputs = ["incoming_request_rate_per_second", "worker_thread_pool_size", "cache_capacity_megabytes",
          "replication_factor_of_storage", "network_latency_injection_ms",
          "garbage_collection_pause_target_ms"]
outputs = ["queue_length_at_the_front_door", "p99_response_time_milliseconds",
           "share_of_requests_rejected", "cache_hit_ratio_over_the_run", "storage_write_amplification",
           "operator_pages_per_day", "energy_per_request_joules"]
parents = {
    outputs[0]: [inputs[0], inputs[1]],
    outputs[1]: [outputs[0], inputs[4]],
    outputs[2]: [outputs[0]],
    outputs[3]: [inputs[2], inputs[0]],
    outputs[4]: [inputs[3], outputs[3]],
    outputs[5]: [inputs[5], outputs[2]],
    outputs[6]: [outputs[1], inputs[1]],
}
with open(graph, "w") as g:
    g.write("# Invented for a layout test: a service that does not exist.\n")
    for name in inputs:
        g.write(f"input {name} real [0, 10]\n")
    for name in outputs:
        g.write(f"output {name} real\n")
    g.write("default effect 0.25 sd\ndefault margin 0.1 sd\nnoise independent\n")
    for child, ps in parents.items():
        for p in ps:
            g.write(f"{p} -> {child}\n")
r = random.Random(5)
with open(runs, "w") as f:
    f.write(",".join(inputs + outputs) + "\n")
    for _ in range(200):
        x = {n: r.uniform(0, 10) for n in inputs}
        for child in outputs:
            x[child] = sum(0.3 * x[p] for p in parents[child]) + r.gauss(0, 1)
        f.write(",".join("%.4f" % x[n] for n in inputs + outputs) + "\n")
PY
}
