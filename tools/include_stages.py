#!/usr/bin/env python3
"""Checks that the includes of include/knotpath point one way through the
stages of ../shared/DESIGN.md ("Architecture"), and prints the graph.

usage: tools/include_stages.py [--graph] [ROOT]

Every header under include/knotpath belongs to a stage (STAGES below); a
header may include headers of its own stage or of earlier ones, never of a
later one, and the graph must have no cycle. A header this script does not
know fails the check: give it a stage here when you add it. --graph prints
each header with its stage and what it includes (the way to see the graph).
Exit status 0 when the graph obeys the rule, 1 otherwise.
"""
import pathlib
import re
import sys

# Stage order (an arrow may only point to the same or a lower number).
STAGES = [
    ("foundation", ["errors.hpp", "scaling.hpp", "detail/scalar.hpp", "detail/parallel.hpp",
                    "detail/centring.hpp", "detail/random.hpp", "detail/truncated_gaussian.hpp"]),
    ("options", ["options.hpp", "demo.hpp"]),
    ("preparation", ["prepare.hpp", "statistics.hpp", "shards.hpp", "mpi_statistics.hpp"]),
    ("operators and factor", ["design/concept.hpp", "design/dense.hpp", "design/dense_view.hpp",
                              "design/gram.hpp", "design/sparse.hpp", "factor.hpp"]),
    ("prepared problem", ["problem.hpp"]),
    ("homotopy", ["knot.hpp", "homotopy.hpp"]),
    ("path", ["path.hpp"]),
    ("trace front end", ["trace.hpp", "solver.hpp", "mpi_columns.hpp"]),
    ("front door", ["core.hpp"]),
    ("selection, inference, precision", ["detail/least_squares.hpp", "cross_validation.hpp", "criteria.hpp",
                                         "inference.hpp", "adjusted_inference.hpp", "first_step_t.hpp",
                                         "precision.hpp"]),
    ("io", ["io/table.hpp", "io/roles.hpp", "io/report.hpp", "io/charts.hpp", "io/saved.hpp"]),
    ("umbrella", ["knotpath.hpp"]),
]

INCLUDE = re.compile(r'^\s*#\s*include\s+"([^"]+)"', re.M)


def main(argv):
    show = "--graph" in argv
    args = [a for a in argv if a != "--graph"]
    root = pathlib.Path(args[0] if args else pathlib.Path(__file__).resolve().parent.parent) / "include" / "knotpath"
    rank = {name: i for i, (_, names) in enumerate(STAGES) for name in names}
    headers = sorted(str(p.relative_to(root)) for p in root.rglob("*.hpp"))
    problems = []
    graph = {}
    for h in headers:
        if h not in rank:
            problems.append(f"{h}: no stage (add it to STAGES in tools/include_stages.py)")
            continue
        text = (root / h).read_text()
        targets = []
        for inc in INCLUDE.findall(text):
            target = str((root / h).parent.joinpath(inc).resolve().relative_to(root.resolve()))
            targets.append(target)
            if target not in rank:
                problems.append(f"{h} includes {target}, which has no stage")
            elif rank[target] > rank[h]:
                problems.append(f"{h} ({STAGES[rank[h]][0]}) includes {target}, a later stage "
                                f"({STAGES[rank[target]][0]})")
        graph[h] = targets
    # cycles (possible within one stage)
    state = {}

    def visit(node, trail):
        state[node] = 1
        for t in graph.get(node, []):
            if state.get(t) == 1:
                problems.append("cycle: " + " -> ".join(trail + [node, t]))
            elif t in graph and state.get(t) is None:
                visit(t, trail + [node])
        state[node] = 2

    for h in graph:
        if state.get(h) is None:
            visit(h, [])
    if show:
        for i, (stage, _) in enumerate(STAGES):
            members = [h for h in headers if rank.get(h) == i]
            if not members:
                continue
            print(f"[{i}] {stage}")
            for h in members:
                print(f"    {h} -> {', '.join(graph.get(h, [])) or '(nothing of knotpath)'}")
    for p in problems:
        print("include_stages: " + p)
    if not problems:
        print(f"include_stages: {len(graph)} headers, every include points to the same or an earlier stage, "
              "no cycle")
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
