#!/usr/bin/env bash
# Regenerates the pictures under docs/img/ with the binary.
#
# The pictures come from the commands that docs/sensitivity.md shows: this script takes the
# shell blocks of that page's generated examples (the blocks tests/docs.rs renders from the
# commands it runs), runs them in a scratch folder laid out like the repository root, and
# copies the pictures they write into docs/img/. Run it from anywhere; it builds the
# release binary first.
#   scripts/docs/make_images.sh
set -euo pipefail
cd "$(dirname "$0")/../.."
root=$PWD

cargo build --release --locked
scratch=$(mktemp -d)
trap 'rm -rf "$scratch"' EXIT
ln -s "$root/demo-dem" "$scratch/demo-dem"
mkdir -p "$scratch/docs/examples" "$scratch/sens"
cp docs/examples/stations_legacy.csv "$scratch/docs/examples/"

# The shell blocks of the generated examples that draw pictures, in page order (the
# legacy survey they read is the committed file; map-refused is an example of a refusal).
blocks="sweep-main sweep-six audit audit-2403 map"
awk -v blocks="$blocks" '
  BEGIN { n = split(blocks, names, " "); for (i = 1; i <= n; i++) wanted[names[i]] = 1 }
  /^<!-- generated: / { generated = ($3 in wanted); next }
  /^<!-- end generated -->/ { generated = 0; next }
  generated && /^```sh$/ { shell = 1; next }
  shell && /^```$/ { shell = 0; next }
  shell { print }
' docs/sensitivity.md > "$scratch/commands.sh"
if [ "$(grep -c '^ringsum ' "$scratch/commands.sh")" -ne 5 ]; then
  echo "make_images.sh: expected the 5 commands of the blocks $blocks in docs/sensitivity.md" >&2
  exit 1
fi

echo "make_images.sh: running in $scratch:" >&2
sed 's/^/  /' "$scratch/commands.sh" >&2
(cd "$scratch" && PATH="$root/target/release:$PATH" bash -euo pipefail commands.sh >/dev/null)

# Picture written by the page's commands -> picture in docs/img.
copies=(
  "sens/sweep.png:sweep_spread.png"
  "sens/sweep_six.png:sweep_lines.png"
  "sens/plots/legacy_scatter.png:legacy_scatter.png"
  "sens/plots_2403/legacy_histogram.png:legacy_histogram.png"
  "sens/plots_2403/legacy_zones.png:legacy_zones.png"
  "sens/tc_map.png:map_preview.png"
)
for pair in "${copies[@]}"; do
  from=${pair%%:*}
  to=${pair##*:}
  cp "$scratch/$from" "docs/img/$to"
  echo "make_images.sh: docs/img/$to from $from" >&2
done
