#!/usr/bin/env python3
"""Checks the declared minimum Rust version (workspace `rust-version`) against the code's
dependencies: every crate of the workspace must declare it, and no normal dependency may
need a newer Rust. Uses `cargo metadata` only (no network, no other toolchain)."""
import json
import subprocess
import sys


def version(v):
    parts = (v or "0").split(".") + ["0", "0"]
    return tuple(int(x) for x in parts[:3])


def main():
    meta = json.loads(
        subprocess.run(
            ["cargo", "metadata", "--format-version", "1", "--locked"],
            check=True,
            capture_output=True,
            text=True,
        ).stdout
    )
    packages = {p["id"]: p for p in meta["packages"]}
    members = set(meta["workspace_members"])
    declared = {packages[m]["name"]: packages[m].get("rust_version") for m in members}
    missing = [n for n, v in declared.items() if not v]
    if missing:
        sys.exit(f"crates without rust-version: {missing}")
    msrv = max(version(v) for v in declared.values())
    # Normal (non-dev, non-build) dependencies reachable from the workspace members.
    nodes = {n["id"]: n for n in meta["resolve"]["nodes"]}
    seen, stack = set(), list(members)
    while stack:
        i = stack.pop()
        if i in seen:
            continue
        seen.add(i)
        for d in nodes[i]["deps"]:
            if any(k["kind"] is None for k in d["dep_kinds"]):
                stack.append(d["pkg"])
    worst = max(
        ((version(packages[i].get("rust_version")), packages[i]["name"]) for i in seen - members),
        default=((0, 0, 0), ""),
    )
    print(f"declared rust-version {'.'.join(map(str, msrv))}; newest needed by a dependency: "
          f"{'.'.join(map(str, worst[0]))} ({worst[1]})")
    if worst[0] > msrv:
        sys.exit("the declared rust-version is older than a dependency needs")
    rustc = subprocess.run(["rustc", "--version"], capture_output=True, text=True).stdout.split()[1]
    if version(rustc) < msrv:
        sys.exit(f"this rustc {rustc} is older than the declared rust-version")


if __name__ == "__main__":
    main()
