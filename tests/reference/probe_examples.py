"""Where the reference tests find the core's probe examples (crate/core/examples/NAME.rs):
$ENV_VAR if set, else $CARGO_TARGET_DIR/release/examples/NAME, else target/release/examples/NAME,
built with cargo the first time it is missing."""
import os
import subprocess
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def example_path(name, env_var):
    if os.environ.get(env_var):
        return Path(os.environ[env_var])
    target = Path(os.environ.get("CARGO_TARGET_DIR", ROOT / "target"))
    p = target / "release" / "examples" / name
    if not p.exists():
        subprocess.run(
            ["cargo", "build", "--release", "-p", "digitdrift-core", "--example", name],
            cwd=ROOT, check=True,
        )
    return p
