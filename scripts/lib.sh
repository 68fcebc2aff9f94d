# shellcheck shell=bash
# Shared helpers for scripts/build, scripts/serve and scripts/test.
#
# Source it; it sets REPO_ROOT and defines:
#   say / warn / die            messages on stderr
#   as_root CMD...              run CMD as root (directly, or through sudo)
#   ensure_apt PKG...           install missing Debian packages (apt-get update once, only if needed)
#   ensure_cargo                cargo on PATH (rustup from apt, else the official rustup installer)
#   ensure_rust_components      rustfmt and clippy
#   ensure_wasm_target          the wasm32-unknown-unknown standard library
#   wasm_bindgen_pin            print the wasm-bindgen version pinned in crate/wasm/Cargo.toml
#   ensure_wasm_bindgen         wasm-bindgen-cli at exactly that version
#   ensure_wasm_opt             wasm-opt (Debian's binaryen)
#   build_page_wasm             the page's WebAssembly (cargo's `wasm` profile, then
#                               wasm-opt), ready for wasm-bindgen; prints its path
#   ensure_node                 node (>= 18) and npm
#   npm_ci_if_needed DIR        npm ci in DIR when node_modules is missing or stale
#   ensure_chromium             Debian's chromium at /usr/bin/chromium (never a downloaded browser)
#   ensure_slurm                Debian's slurm-wlm and munge (the cluster tier's one-node Slurm)
# Every ensure_* does nothing when the tool is already there, so calling it
# again is cheap.

REPO_ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
export REPO_ROOT

say() { printf '==> %s\n' "$*" >&2; }
warn() { printf 'warning: %s\n' "$*" >&2; }
die() {
    printf 'error: %s\n' "$*" >&2
    exit 1
}

# Run a command as root: directly when we are root, else through sudo.
as_root() {
    if [ "$(id -u)" -eq 0 ]; then
        "$@"
    elif command -v sudo >/dev/null 2>&1; then
        sudo "$@"
    else
        die "need root to run '$*', and sudo is not installed; run this script as root"
    fi
}

_CRITBOX_APT_UPDATED=0

# apt-get update, at most once per script run.
apt_update_once() {
    [ "$_CRITBOX_APT_UPDATED" = 1 ] && return 0
    say "apt-get update"
    as_root apt-get -o DPkg::Lock::Timeout=900 update -qq ||
        die "apt-get update failed (see above)"
    _CRITBOX_APT_UPDATED=1
}

# ensure_apt PKG... : install the Debian packages that are not installed yet.
# Waits for another apt/dpkg run to finish instead of failing on its lock.
ensure_apt() {
    local pkg missing=()
    for pkg in "$@"; do
        if ! dpkg-query -W -f='${Status}' "$pkg" 2>/dev/null | grep -q 'install ok installed'; then
            missing+=("$pkg")
        fi
    done
    [ "${#missing[@]}" -eq 0 ] && return 0
    command -v apt-get >/dev/null 2>&1 ||
        die "missing packages: ${missing[*]}; this system has no apt-get, install them by hand"
    apt_update_once
    say "apt-get install ${missing[*]}"
    as_root env DEBIAN_FRONTEND=noninteractive \
        apt-get -o DPkg::Lock::Timeout=900 install -y -qq "${missing[@]}" ||
        die "apt-get install ${missing[*]} failed (see above)"
}

# cargo on PATH. Looks in ~/.cargo/bin first, then installs rustup from apt
# (Debian 13 and later) or with the official installer.
ensure_cargo() {
    if ! command -v cargo >/dev/null 2>&1 && [ -x "${CARGO_HOME:-$HOME/.cargo}/bin/cargo" ]; then
        export PATH="${CARGO_HOME:-$HOME/.cargo}/bin:$PATH"
    fi
    command -v cargo >/dev/null 2>&1 && return 0
    say "cargo not found; installing rustup"
    if command -v apt-get >/dev/null 2>&1; then
        apt_update_once
        if as_root env DEBIAN_FRONTEND=noninteractive \
            apt-get -o DPkg::Lock::Timeout=900 install -y -qq rustup; then
            rustup default stable || die "rustup is installed but 'rustup default stable' failed"
        else
            warn "Debian has no rustup package here; trying the official installer"
        fi
    fi
    if ! command -v cargo >/dev/null 2>&1 && ! [ -x "${CARGO_HOME:-$HOME/.cargo}/bin/cargo" ]; then
        command -v curl >/dev/null 2>&1 || die "cargo is missing, Debian has no rustup package and curl is not installed: install Rust (https://rustup.rs) by hand"
        curl --proto '=https' --tlsv1.2 -sSf --max-time 300 https://sh.rustup.rs |
            sh -s -- -y --profile minimal --component rustfmt,clippy ||
            die "cargo is missing and neither Debian's rustup nor the official rustup installer worked: install Rust (https://rustup.rs) by hand"
    fi
    export PATH="${CARGO_HOME:-$HOME/.cargo}/bin:$PATH"
    command -v cargo >/dev/null 2>&1 || die "Rust was installed but cargo is still not on PATH"
}

# rustfmt and clippy, through rustup when they are missing.
ensure_rust_components() {
    ensure_cargo
    local need=()
    cargo fmt --version >/dev/null 2>&1 || need+=(rustfmt)
    cargo clippy --version >/dev/null 2>&1 || need+=(clippy)
    [ "${#need[@]}" -eq 0 ] && return 0
    command -v rustup >/dev/null 2>&1 ||
        die "cargo ${need[*]} missing and rustup is not installed to add them"
    say "rustup component add ${need[*]}"
    rustup component add "${need[@]}" || die "rustup component add ${need[*]} failed"
}

# The nightly toolchain (minimal profile) and cargo-fuzz, for scripts/fuzz.
# cargo-fuzz is built from crates.io at the version pinned here.
CARGO_FUZZ_VERSION=0.13.2
ensure_fuzz_tools() {
    ensure_cargo
    command -v rustup >/dev/null 2>&1 || die "fuzzing needs rustup (for the nightly toolchain), which is not installed"
    if ! rustup run nightly rustc --version >/dev/null 2>&1; then
        say "rustup toolchain install nightly --profile minimal"
        rustup toolchain install nightly --profile minimal || die "installing the nightly toolchain failed"
    fi
    if ! cargo fuzz --version 2>/dev/null | grep -q "$CARGO_FUZZ_VERSION"; then
        say "cargo install cargo-fuzz --version $CARGO_FUZZ_VERSION"
        cargo install cargo-fuzz --version "$CARGO_FUZZ_VERSION" || die "cargo install cargo-fuzz failed"
    fi
}

# The standard library for wasm32-unknown-unknown.
ensure_wasm_target() {
    ensure_cargo
    local sysroot
    sysroot="$(rustc --print sysroot)"
    [ -d "$sysroot/lib/rustlib/wasm32-unknown-unknown" ] && return 0
    command -v rustup >/dev/null 2>&1 ||
        die "the wasm32-unknown-unknown target is missing and rustup is not installed to add it"
    say "rustup target add wasm32-unknown-unknown"
    rustup target add wasm32-unknown-unknown || die "rustup target add wasm32-unknown-unknown failed"
}

# Prints the exact wasm-bindgen version that crate/wasm/Cargo.toml pins,
# from a line such as `wasm-bindgen = "=0.2.130"` or
# `wasm-bindgen = { version = "=0.2.130", ... }` (or the workspace manifest's
# line when the crate says `wasm-bindgen.workspace = true`). The CLI must
# match it.
wasm_bindgen_pin() {
    local manifest="$REPO_ROOT/crate/wasm/Cargo.toml" line version
    [ -f "$manifest" ] || die "$manifest not found"
    line="$(grep -E '^[[:space:]]*wasm-bindgen([[:space:]]*=|\.workspace)' "$manifest" | head -n 1)" ||
        die "$manifest has no wasm-bindgen dependency line"
    if printf '%s\n' "$line" | grep -q 'workspace'; then
        # `wasm-bindgen.workspace = true`: the version is in the workspace manifest.
        manifest="$REPO_ROOT/Cargo.toml"
        line="$(grep -E '^[[:space:]]*wasm-bindgen[[:space:]]*=' "$manifest" | head -n 1)" ||
            die "crate/wasm takes wasm-bindgen from the workspace, but $manifest has no wasm-bindgen line"
    fi
    version="$(printf '%s\n' "$line" | sed -nE 's/.*"=[[:space:]]*([0-9]+\.[0-9]+\.[0-9]+)".*/\1/p')"
    [ -n "$version" ] ||
        die "$manifest: wasm-bindgen must be pinned exactly (version = \"=X.Y.Z\") so the CLI can match it; found: $line"
    printf '%s\n' "$version"
}

# The version printed by `wasm-bindgen --version`, or nothing.
_wasm_bindgen_version() {
    command -v wasm-bindgen >/dev/null 2>&1 || return 0
    wasm-bindgen --version 2>/dev/null | awk '{print $2}'
}

# wasm-bindgen-cli at exactly the pinned version. If another
# `cargo install wasm-bindgen-cli` is already running, waits for it instead
# of starting a second one.
ensure_wasm_bindgen() {
    ensure_cargo
    local pin have
    pin="$(wasm_bindgen_pin)"
    have="$(_wasm_bindgen_version)"
    [ "$have" = "$pin" ] && return 0
    if command -v pgrep >/dev/null 2>&1 && pgrep -f 'cargo install wasm-bindgen-cli' >/dev/null 2>&1; then
        say "another 'cargo install wasm-bindgen-cli' is running; waiting for it"
        while pgrep -f 'cargo install wasm-bindgen-cli' >/dev/null 2>&1; do sleep 5; done
        have="$(_wasm_bindgen_version)"
        [ "$have" = "$pin" ] && return 0
    fi
    say "cargo install wasm-bindgen-cli --version $pin (found: ${have:-none}; takes several minutes)"
    cargo install wasm-bindgen-cli --version "$pin" ||
        die "cargo install wasm-bindgen-cli --version $pin failed (see above)"
    have="$(_wasm_bindgen_version)"
    [ "$have" = "$pin" ] ||
        die "installed wasm-bindgen-cli $pin but 'wasm-bindgen --version' says '${have:-nothing}'; is another wasm-bindgen earlier on PATH? ($(command -v wasm-bindgen || echo none))"
}

# wasm-opt, from Debian's binaryen package (the page's WebAssembly goes
# through it: see build_page_wasm).
ensure_wasm_opt() {
    command -v wasm-opt >/dev/null 2>&1 && return 0
    ensure_apt binaryen
    command -v wasm-opt >/dev/null 2>&1 || die "Debian's binaryen is installed but wasm-opt is not on PATH"
}

# The page's WebAssembly, for scripts/build and scripts/build-single: cargo
# builds critbox-wasm in the `wasm` profile (Cargo.toml: release settings,
# opt-level 3, no debug info), then `wasm-opt -O3` optimises it once more and
# leaves out the function names (the name section). Prints the path of the
# result, which wasm-bindgen takes next (call it as `wasm="$(build_page_wasm)"`
# after ensure_cargo, which puts cargo on PATH); it is made again only when
# cargo's output is newer.
#
# wasm-opt runs before wasm-bindgen, not after: Debian 12's binaryen (108)
# renumbers the two tables of wasm-bindgen's output wrongly (the export
# `__wbindgen_externrefs` ends up naming the function table, and the module
# fails to start with "WebAssembly.Table.set(): Argument 1 is invalid for
# table"); before wasm-bindgen the module has one table. Its features
# (simd128, bulk memory, ...) come from the module's target_features section.
build_page_wasm() {
    # stdout carries only the path: whatever the installers print goes to stderr.
    { ensure_cargo && ensure_wasm_target && ensure_wasm_opt; } >&2
    local target_dir="${CARGO_TARGET_DIR:-$REPO_ROOT/target}"
    local built="$target_dir/wasm32-unknown-unknown/wasm/critbox_wasm.wasm"
    local out="$target_dir/wasm-opt/critbox_wasm.wasm"
    say "cargo build --profile wasm --target wasm32-unknown-unknown -p critbox-wasm"
    cargo build --profile wasm --target wasm32-unknown-unknown -p critbox-wasm >&2 ||
        die "cargo build of the WebAssembly failed (see above)"
    [ -f "$built" ] || die "cargo finished but $built is missing"
    if ! [ -f "$out" ] || [ "$built" -nt "$out" ]; then
        mkdir -p "$(dirname "$out")"
        say "wasm-opt -O3 ($(wc -c <"$built") bytes in)"
        wasm-opt -O3 "$built" -o "$out.tmp" || die "wasm-opt failed on $built (see above)"
        mv "$out.tmp" "$out"
    fi
    printf '%s\n' "$out"
}

# node (18 or newer, for `node --test`) and npm, from Debian if missing.
ensure_node() {
    local need=()
    command -v node >/dev/null 2>&1 || need+=(nodejs)
    command -v npm >/dev/null 2>&1 || need+=(npm)
    [ "${#need[@]}" -gt 0 ] && ensure_apt "${need[@]}"
    command -v node >/dev/null 2>&1 || die "node is still missing after installing nodejs"
    command -v npm >/dev/null 2>&1 || die "npm is still missing after installing npm"
    local major
    major="$(node -p 'process.versions.node.split(".")[0]')"
    [ "$major" -ge 18 ] || die "node $(node --version) is too old: the tests need node 18 or newer"
}

# npm_ci_if_needed DIR: npm ci in folder DIR when its node_modules is missing or its lock file
# changed since the last install (a stamp of the lock file's hash). Never
# downloads a browser (PLAYWRIGHT_SKIP_BROWSER_DOWNLOAD).
npm_ci_if_needed() {
    local dir="$1" lock_hash stamp
    [ -f "$dir/package-lock.json" ] ||
        die "$dir/package-lock.json is missing: run 'npm install' in $dir and commit the lock file (npm ci needs it)"
    lock_hash="$(sha256sum "$dir/package-lock.json" | awk '{print $1}')"
    stamp="$dir/node_modules/.critbox-lock-sha256"
    if [ ! -d "$dir/node_modules" ] || [ "$(cat "$stamp" 2>/dev/null || true)" != "$lock_hash" ]; then
        say "npm ci in $dir (node_modules missing or package-lock.json changed)"
        (cd "$dir" && PLAYWRIGHT_SKIP_BROWSER_DOWNLOAD=1 npm ci --no-audit --no-fund)
        printf '%s\n' "$lock_hash" >"$stamp"
    else
        echo "$dir/node_modules matches package-lock.json; npm ci not needed"
    fi
}

# Debian's chromium at $CRITBOX_CHROMIUM (default /usr/bin/chromium).
# Never downloads a browser of its own.
ensure_chromium() {
    export CRITBOX_CHROMIUM="${CRITBOX_CHROMIUM:-/usr/bin/chromium}"
    [ -x "$CRITBOX_CHROMIUM" ] && return 0
    [ "$CRITBOX_CHROMIUM" = /usr/bin/chromium ] ||
        die "CRITBOX_CHROMIUM=$CRITBOX_CHROMIUM is not an executable file"
    ensure_apt chromium
    [ -x /usr/bin/chromium ] || die "Debian's chromium package is installed but /usr/bin/chromium is missing"
}

# Debian's slurm-wlm and munge, for the cluster tier (scripts/cluster/test-local).
ensure_slurm() {
    ensure_apt slurm-wlm munge
    command -v slurmctld >/dev/null 2>&1 && command -v munged >/dev/null 2>&1 ||
        die "slurm-wlm and munge are installed but slurmctld or munged is not on PATH"
}
