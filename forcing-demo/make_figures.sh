#!/usr/bin/env bash
# Regenerates the figures in docs/figures (the README shows them) from the demo: a run, its
# Keeling fits of two nights, its invented δR observations, a 200-member ensemble and the
# invented grid's July GPP map. Uses the
# `isodisc` on PATH (set ISODISC=path/to/isodisc for another). Run from anywhere:
#     bash forcing-demo/make_figures.sh
set -euo pipefail
cd "$(dirname "$0")/.."
isodisc=${ISODISC:-isodisc}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT

obs=forcing-demo/observations
"$isodisc" run forcing-demo/site.toml --out "$tmp/demo" --quiet
"$isodisc" keeling "$obs/canopy_air.csv" --by night --site forcing-demo/site.toml \
    --out "$tmp/keeling.csv"
"$isodisc" plot "$tmp/demo" --out "$tmp/figures" --keeling "$tmp/keeling.csv" \
    --samples "$obs/canopy_air.csv" --groups 2025-01-10 \
    --observed "$obs/d13c_respiration_observed.csv" > /dev/null
"$isodisc" ensemble forcing-demo/site.toml --spec forcing-demo/ensemble.toml --members 200 \
    --seed 7 --out "$tmp/ensemble" --quiet
"$isodisc" plot "$tmp/ensemble" --out "$tmp/ensemble_figures" > /dev/null
"$isodisc" grid forcing-demo/grid/grid.toml --out "$tmp/grid" --quiet
"$isodisc" plot "$tmp/grid" --map gpp --month 2001-07 --out "$tmp/grid_figures" > /dev/null

mkdir -p docs/figures
rm -f docs/figures/*.svg
cp "$tmp"/figures/*.svg docs/figures/
cp "$tmp/ensemble_figures/ensemble_discrimination.svg" docs/figures/
cp "$tmp/grid_figures/map_gpp_2001-07.svg" docs/figures/
ls docs/figures
