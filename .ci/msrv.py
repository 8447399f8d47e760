"""Check the crate's declared rust-version against what it really needs.

Only one Rust toolchain can be installed on the machines this project runs on, so `cargo +1.88
check` is not available. This check covers the part a second toolchain would catch most often: a
dependency (in Cargo.lock) whose own rust-version is newer than ours. Standard-library APIs newer
than our rust-version are caught by clippy's `incompatible_msrv` lint, which reads the same field.
"""
import json
import subprocess
import sys


def version(text):
    return tuple(int(p) for p in text.split(".")[:3]) + (0,) * (3 - len(text.split(".")[:3]))


meta = json.loads(
    subprocess.run(
        ["cargo", "metadata", "--format-version", "1", "--locked"],
        check=True,
        capture_output=True,
        text=True,
    ).stdout
)
ours = next(p for p in meta["packages"] if p["name"] == "runcal")
declared = ours.get("rust_version")
if not declared:
    sys.exit("Cargo.toml declares no rust-version")
# Only packages this build compiles (Cargo.lock also lists optional dependencies no feature turns on).
tree = subprocess.run(
    ["cargo", "tree", "--locked", "-e", "normal,build,dev", "--prefix", "none", "--format", "{p}"],
    check=True,
    capture_output=True,
    text=True,
).stdout
used = {tuple(line.split()[:2]) for line in tree.splitlines() if line.strip()}
too_new = [
    (p["name"], p["version"], p["rust_version"])
    for p in meta["packages"]
    if (p["name"], "v" + p["version"]) in used
    and p.get("rust_version")
    and version(p["rust_version"]) > version(declared)
]
if too_new:
    for name, ver, rv in sorted(too_new):
        print(f"{name} {ver} needs Rust {rv}, newer than our rust-version {declared}")
    sys.exit(1)
print(f"rust-version {declared}: every resolved dependency declares an equal or older one")
