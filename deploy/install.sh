#!/bin/sh
# Install or upgrade millwarden on a Debian edge box (systemd), from a checkout of the project.
#
#   sudo sh deploy/install.sh             install, or upgrade in place (the site's config is kept)
#   sh deploy/install.sh --dry-run        print what would be done, change nothing
#
# Idempotent: running it again installs the application afresh and creates only what is missing;
# the site's config, env file and data are kept as they are.
#   user and group millwarden (system, no login, no home)
#   /opt/millwarden           the application (root-owned, read-only for the service), npm ci --omit=dev
#   /etc/millwarden           millwarden.yaml from config/plant-template.yaml (only if absent), env (0600)
#   /var/lib/millwarden       the historian and other data, owned by millwarden, mode 0750
#   /etc/systemd/system/millwarden.service, enabled; restarted only if it was running (upgrade)
#
# ADVISORY ONLY: millwarden reads the plant and never writes to the control system.
set -eu

APP_DIR=/opt/millwarden
ETC_DIR=/etc/millwarden
DATA_DIR=/var/lib/millwarden
UNIT_FILE=/etc/systemd/system/millwarden.service
BIN_LINK=/usr/local/bin/millwarden
SVC_USER=millwarden

DRY_RUN=0
for arg in "$@"; do
  case "$arg" in
    --dry-run) DRY_RUN=1 ;;
    -h | --help)
      awk 'NR > 1 && /^#/ { print } /^set -eu/ { exit }' "$0"
      exit 0
      ;;
    *)
      echo "install.sh: unknown argument \"$arg\" (expected --dry-run or --help)" >&2
      exit 2
      ;;
  esac
done

SRC=$(cd "$(dirname "$0")/.." && pwd)

# Print each step; run it unless --dry-run.
run() {
  printf '+ %s\n' "$*"
  if [ "$DRY_RUN" -eq 0 ]; then
    "$@"
  fi
}

note() {
  echo "# $*"
}

if [ "$DRY_RUN" -eq 0 ] && [ "$(id -u)" -ne 0 ]; then
  echo "install.sh: run as root (sudo sh deploy/install.sh), or with --dry-run to see the steps" >&2
  exit 1
fi

for f in package.json package-lock.json bin/millwarden.js deploy/millwarden.service config/plant-template.yaml; do
  if [ ! -f "$SRC/$f" ]; then
    echo "install.sh: $SRC/$f is missing: run this from a complete checkout of millwarden" >&2
    exit 1
  fi
done
# The compiled program: built in the checkout, because the box gets no TypeScript compiler
# (npm ci --omit=dev leaves the dev tools out). Built afresh when the checkout has its dev tools,
# so a dist/ older than the sources is never installed.
if [ -x "$SRC/node_modules/.bin/tsc" ]; then
  run sh -c "cd '$SRC' && npm run build"
elif [ ! -f "$SRC/dist/cli/main.js" ]; then
  if [ "$DRY_RUN" -eq 1 ]; then
    note "$SRC/dist is missing: a real run stops here (run npm ci in the checkout first; it builds dist/)"
  else
    echo "install.sh: $SRC/dist/cli/main.js is missing: run \"npm ci\" in $SRC first (it builds dist/)" >&2
    exit 1
  fi
fi
if ! command -v node >/dev/null 2>&1 || ! command -v npm >/dev/null 2>&1; then
  note "node and npm are needed (Node 20: apt-get install nodejs npm, or the site's own package)"
  [ "$DRY_RUN" -eq 1 ] || exit 1
fi
if [ ! -x /usr/bin/node ]; then
  note "the unit starts /usr/bin/node; this box has node at $(command -v node || echo '(none)'): link it or adjust ExecStart in a drop-in"
fi

# 1. User and group.
if getent group "$SVC_USER" >/dev/null 2>&1; then
  note "group $SVC_USER exists"
else
  run groupadd --system "$SVC_USER"
fi
if getent passwd "$SVC_USER" >/dev/null 2>&1; then
  note "user $SVC_USER exists"
else
  run useradd --system --gid "$SVC_USER" --no-create-home --home-dir "$DATA_DIR" --shell /usr/sbin/nologin --comment "millwarden advisory-only monitoring" "$SVC_USER"
fi

# 2. The application: a fresh copy beside the old one, its production dependencies, then swapped
# in, so a failed npm ci leaves the installed version untouched.
STAGE="$APP_DIR.new"
run rm -rf "$STAGE"
run mkdir -p "$STAGE"
for item in package.json package-lock.json bin dist dashboard config deploy README.md DEVELOPERS.md; do
  if [ -e "$SRC/$item" ] || [ "$DRY_RUN" -eq 1 ]; then
    run cp -R "$SRC/$item" "$STAGE/"
  fi
done
# --ignore-scripts: the package's own "prepare" would compile TypeScript, which --omit=dev leaves
# out (dist/ is copied ready-built); better-sqlite3's native addon is then built by its own script.
run sh -c "cd '$STAGE' && npm ci --omit=dev --ignore-scripts --no-audit --no-fund && npm rebuild better-sqlite3"
run chown -R root:root "$STAGE"
run chmod -R u=rwX,go=rX "$STAGE"
if [ -d "$APP_DIR" ]; then
  run rm -rf "$APP_DIR.old"
  run mv "$APP_DIR" "$APP_DIR.old"
fi
run mv "$STAGE" "$APP_DIR"
run rm -rf "$APP_DIR.old"
run ln -sf "$APP_DIR/bin/millwarden.js" "$BIN_LINK"

# 3. Configuration: the site's files are never overwritten.
run install -d -m 0750 -o root -g "$SVC_USER" "$ETC_DIR"
if [ -f "$ETC_DIR/millwarden.yaml" ]; then
  note "$ETC_DIR/millwarden.yaml exists: kept (the template for comparison is $APP_DIR/config/plant-template.yaml)"
else
  run install -m 0640 -o root -g "$SVC_USER" "$SRC/config/plant-template.yaml" "$ETC_DIR/millwarden.yaml"
fi
if [ -f "$ETC_DIR/env" ]; then
  note "$ETC_DIR/env exists: kept; its mode is set to 0600"
  run chmod 0600 "$ETC_DIR/env"
  run chown root:root "$ETC_DIR/env"
else
  # systemd reads it as root before the service drops to the millwarden user: root only.
  run sh -c "umask 077 && printf '%s\\n' '# Secrets named by *Env keys in millwarden.yaml: NAME=value, one a line. Mode 0600, root only.' > '$ETC_DIR/env'"
  run chown root:root "$ETC_DIR/env"
  run chmod 0600 "$ETC_DIR/env"
fi

# 4. Data: the historian, its migration backups, the OPC UA certificates, the Web Push keys.
run install -d -m 0750 -o "$SVC_USER" -g "$SVC_USER" "$DATA_DIR"

# 5. The service.
run install -m 0644 -o root -g root "$SRC/deploy/millwarden.service" "$UNIT_FILE"
if command -v systemctl >/dev/null 2>&1 || [ "$DRY_RUN" -eq 1 ]; then
  run systemctl daemon-reload
  run systemctl enable millwarden.service
  # An upgrade restarts a running service (schema migrations run at start, after a backup copy);
  # a first install leaves it stopped until the config is filled in.
  run systemctl try-restart millwarden.service
else
  note "no systemctl on this box: start it by hand as $SVC_USER: $APP_DIR/bin/millwarden.js run --config $ETC_DIR/millwarden.yaml"
fi

DONE="done"
if [ "$DRY_RUN" -eq 1 ]; then
  DONE="done (dry run: nothing was changed)"
fi
cat <<EOF
# $DONE
# next: edit $ETC_DIR/millwarden.yaml (every placeholder) and $ETC_DIR/env, then
#   sudo -u $SVC_USER $BIN_LINK check --config $ETC_DIR/millwarden.yaml
#   sudo systemctl start millwarden && journalctl -u millwarden -f
EOF
