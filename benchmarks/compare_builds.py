"""Compare two sets of built lane graphs node by node and lane by lane, within a tolerance.

    python benchmarks/compare_builds.py OLD NEW [--tolerance 0.001] [--reach 0.1]

OLD and NEW are output folders of `clearway build` (each holding roadmap.graphml), or folders
of such folders, paired by name. Nodes are paired by position (same kind, same label for
stations, within `--reach` metres, one-to-one by the smallest total displacement:
`roadmap.ids.match_nodes`), lanes through their paired end nodes (`match_edge_pairs`). A
table lists, per drawing, the node and lane counts, how many paired nodes carry another id,
and the largest node move, node clearance change, lane length change, lane clearance_min
change and lane Hausdorff distance; every node or lane beyond `--tolerance` metres, or left
unpaired, is listed below it. Exit status 1 when anything is beyond the tolerance.

For changes meant to move nothing but the last bits (a regrouped union, another ring start).
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np
import shapely

from clearway.exporters.graphml_read import read_graphml
from clearway.roadmap.ids import match_edge_pairs, match_nodes


def compare_graphs_within(old, new, *, tolerance=0.001, reach=0.1):
    """Return (row of figures, list of findings beyond `tolerance`) for two lane graphs."""
    pairs = match_nodes(old, new, tolerance=reach)          # {new id: old id}
    findings = []
    moves, clearances, renamed = [0.0], [0.0], 0
    for new_id, old_id in pairs.items():
        a, b = old.nodes[old_id], new.nodes[new_id]
        move = float(np.hypot(a["x"] - b["x"], a["y"] - b["y"]))
        change = abs(a["clearance"] - b["clearance"])
        moves.append(move)
        clearances.append(change)
        renamed += new_id != old_id
        if move > tolerance or change > tolerance:
            findings.append(f"node {old_id} -> {new_id} ({a['kind']}) at ({a['x']:.4f}, "
                            f"{a['y']:.4f}): moved {move * 1000:.3f} mm, clearance "
                            f"{a['clearance']:.4f} -> {b['clearance']:.4f} m")
    for node in sorted(set(old.nodes) - set(pairs.values())):
        attrs = old.nodes[node]
        findings.append(f"node {node} ({attrs['kind']}) at ({attrs['x']:.4f}, {attrs['y']:.4f}) "
                        f"only in OLD")
    for node in sorted(set(new.nodes) - set(pairs)):
        attrs = new.nodes[node]
        findings.append(f"node {node} ({attrs['kind']}) at ({attrs['x']:.4f}, {attrs['y']:.4f}) "
                        f"only in NEW")
    edge_pairs = match_edge_pairs(old, new, pairs)          # {new key: old key}
    old_edges = {key: (u, v, attrs) for u, v, key, attrs in old.edges(keys=True, data=True)}
    lengths, lows, distances = [0.0], [0.0], [0.0]
    for u, v, key, attrs in new.edges(keys=True, data=True):
        if key not in edge_pairs:
            findings.append(f"lane {key} {u}-{v} ({attrs['length']:.3f} m) only in NEW")
            continue
        _, _, before = old_edges[edge_pairs[key]]
        length = abs(before["length"] - attrs["length"])
        low = abs(before["clearance_min"] - attrs["clearance_min"])
        distance = float(shapely.hausdorff_distance(before["geometry"], attrs["geometry"]))
        lengths.append(length)
        lows.append(low)
        distances.append(distance)
        if max(length, low, distance) > tolerance:
            findings.append(f"lane {edge_pairs[key]} -> {key}: length {before['length']:.4f} -> "
                            f"{attrs['length']:.4f} m, clearance_min {before['clearance_min']:.4f}"
                            f" -> {attrs['clearance_min']:.4f} m, {distance * 1000:.3f} mm apart")
    for key in sorted(set(old_edges) - set(edge_pairs.values())):
        u, v, attrs = old_edges[key]
        findings.append(f"lane {key} {u}-{v} ({attrs['length']:.3f} m) only in OLD")
    row = (old.number_of_nodes(), new.number_of_nodes(), old.number_of_edges(),
           new.number_of_edges(), renamed, max(moves), max(clearances), max(lengths), max(lows),
           max(distances))
    return row, findings


def _graphs(folder: Path) -> dict[str, Path]:
    if (folder / "roadmap.graphml").exists():
        return {folder.name: folder / "roadmap.graphml"}
    return {path.parent.name: path for path in sorted(folder.glob("*/roadmap.graphml"))}


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("old", type=Path)
    parser.add_argument("new", type=Path)
    parser.add_argument("--tolerance", type=float, default=0.001, help="metres (default 1 mm)")
    parser.add_argument("--reach", type=float, default=0.1,
                        help="largest move of a node still paired, metres (default 0.1)")
    args = parser.parse_args(argv)
    old, new = _graphs(args.old), _graphs(args.new)
    names = sorted(set(old) & set(new))
    print("| drawing | nodes | lanes | ids changed | node move mm | node clearance mm "
          "| lane length mm | lane clearance_min mm | lane apart mm |")
    print("|---|---|---|---|---|---|---|---|---|")
    bad = False
    for name in names:
        row, findings = compare_graphs_within(read_graphml(old[name]), read_graphml(new[name]),
                                              tolerance=args.tolerance, reach=args.reach)
        nodes = f"{row[0]}" if row[0] == row[1] else f"{row[0]} -> {row[1]}"
        lanes = f"{row[2]}" if row[2] == row[3] else f"{row[2]} -> {row[3]}"
        print(f"| {name} | {nodes} | {lanes} | {row[4]} | "
              + " | ".join(f"{value * 1000:.4f}" for value in row[5:]) + " |")
        for line in findings:
            print(f"    {name}: {line}")
        bad |= bool(findings)
    for name in sorted(set(old) ^ set(new)):
        print(f"    {name}: only in {'OLD' if name in old else 'NEW'}")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
