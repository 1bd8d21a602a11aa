#!/usr/bin/env python3
"""Paste the demo's real output into README.md: the first ```text block after each tour heading.

Run from the repository root after `cargo build --release`; review the diff before committing.
tests/cli.rs checks that the verify block matches today's output; the design block is refreshed\nhere too (its verification matrix cut to the verdict line).
"""
import re
import subprocess

N = "./target/release/nadir"
P, C, S = "examples/biorefinery/plant.yaml", "examples/biorefinery/cases.yaml", "schemes/biorefinery.yaml"
BLOCKS = {
    "### `nadir verify": [N, "verify", P, S, "--cases", C],
    "### `nadir replay": [N, "replay", P, S, "--cases", C, "--case", "utility-loss-then-engine-trip",
                          "--at", "full-rate", "--plot", "docs/demo-utility-loss-then-engine-trip.svg", "--force"],
    "### `nadir audit": [N, "audit", P, S, "--cases", C],
    "### `nadir sheet": [N, "sheet", P, S],
    "### `nadir compare": [N, "compare", P, S, "schemes/biorefinery-proposed.yaml", "--cases", C],
}


def design_block():
    """The design command and its output, with the verification matrix cut to its verdict."""
    cmd = [N, "design", P, "--cases", C, "-o", "proposed.yaml", "--force"]
    out = subprocess.run(cmd, capture_output=True, text=True).stdout
    subprocess.run(["rm", "-f", "proposed.yaml"])
    lines = out.split("\n")
    i = next(k for k, l in enumerate(lines) if l.startswith("Verification of"))
    tail = lines[i:]
    audit = next((k for k, l in enumerate(tail) if l.startswith("Audit violations")), len(tail))
    verdict = [l for l in tail[:audit] if l.startswith("All ") or " FAIL." in l]
    verdict += [l for l in tail[audit:] if l.startswith("Audit violations") or l.startswith("  - ")]
    return "\n".join(
        ["$ nadir design " + P + " --cases " + C + " -o proposed.yaml"]
        + [l for l in lines[:i]]
        + [lines[i], "(the full matrix follows, as `nadir verify` prints it)"]
        + verdict
    ).replace("\n\nVerification of", "\nVerification of")


text = open("README.md", encoding="utf-8").read()
start = text.index("### `nadir design")
fence = text.index("```text\n", start) + len("```text\n")
end = text.index("\n```", fence)
text = text[:fence] + design_block() + text[end:]
for heading, cmd in BLOCKS.items():
    out = subprocess.run(cmd, capture_output=True, text=True).stdout.rstrip("\n")
    start = text.index(heading)
    fence = text.index("```text\n", start) + len("```text\n")
    end = text.index("\n```", fence)
    text = text[:fence] + out + text[end:]
# The second demo: the cane mill's exporting grid loss, its command line kept above the output.
P2, C2, S2 = "examples/canemill/plant.yaml", "examples/canemill/cases.yaml", "schemes/canemill.yaml"
cmd = [N, "replay", P2, S2, "--cases", C2, "--case", "grid-loss", "--at", "crushing"]
out = subprocess.run(cmd, capture_output=True, text=True).stdout.rstrip("\n")
start = text.index("### A second demo")
fence = text.index("```text\n", start) + len("```text\n")
end = text.index("\n```", fence)
line = "$ nadir replay " + " ".join(cmd[2:])
text = text[:fence] + line + "\n" + out + text[end:]
open("README.md", "w", encoding="utf-8").write(text)
# The second demo plot the README links: both islands after the bus split.
subprocess.run([N, "replay", P, S, "--cases", C, "--case", "bus-split-islanded",
                "--plot", "docs/demo-bus-split-islanded.svg", "--force"], capture_output=True, check=True)
