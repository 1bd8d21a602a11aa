#!/usr/bin/env python3
"""Paste the demo's real output into README.md: the first ```text block after each tour heading.

Run from the repository root after `cargo build --release`; review the diff before committing.
tests/cli.rs checks that the verify block matches today's output.
"""
import re
import subprocess

N = "./target/release/nadir"
P, C, S = "examples/biorefinery/plant.yaml", "examples/biorefinery/cases.yaml", "schemes/biorefinery.yaml"
BLOCKS = {
    "### `nadir verify": [N, "verify", P, S, "--cases", C],
    "### `nadir replay": [N, "replay", P, S, "--cases", C, "--case", "utility-loss-then-engine-trip",
                          "--at", "full-rate", "--plot", "docs/demo-utility-loss-then-engine-trip.svg"],
    "### `nadir audit": [N, "audit", P, S],
    "### `nadir compare": [N, "compare", P, S, "schemes/biorefinery-proposed.yaml", "--cases", C],
}

text = open("README.md", encoding="utf-8").read()
for heading, cmd in BLOCKS.items():
    out = subprocess.run(cmd, capture_output=True, text=True).stdout.rstrip("\n")
    start = text.index(heading)
    fence = text.index("```text\n", start) + len("```text\n")
    end = text.index("\n```", fence)
    text = text[:fence] + out + text[end:]
open("README.md", "w", encoding="utf-8").write(text)
