#!/usr/bin/env bash
# Rebuild the sparse direct solver (SuiteSparse KLU + AMD + COLAMD + BTF + METIS) as WebAssembly.
#
#   wasm/build.sh              rebuild into wasm/ (the committed klu.wasm, klu.cjs, BUILDINFO.json)
#   wasm/build.sh --out DIR    rebuild into DIR instead (CI uses this to test the recipe)
#
# Needs Debian (bookworm) with apt: installs Debian's emscripten and fetches Debian's
# SuiteSparse source package. Run as root, or with sudo available.
set -euo pipefail

HERE="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
OUT="$HERE"
SIMD="${BRANCHLINE_WASM_SIMD:-1}"
while [ $# -gt 0 ]; do
  case "$1" in
    --out) OUT="$(mkdir -p "$2" && cd "$2" && pwd)"; shift 2 ;;
    --no-simd) SIMD=0; shift ;;
    *) echo "build.sh: unknown option '$1' (accepted: --out DIR, --no-simd)" >&2; exit 2 ;;
  esac
done
WORK="${BRANCHLINE_WASM_WORK:-$HERE/build}"
SUITESPARSE_DEB_VERSION="1:5.12.0+dfsg-2"

SUDO=""
if [ "$(id -u)" != 0 ]; then SUDO="sudo"; fi

# --- toolchain and sources from Debian -----------------------------------------------------------
if ! command -v emcc >/dev/null 2>&1 || ! command -v dpkg-source >/dev/null 2>&1; then
  $SUDO apt-get update -q
  DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -q emscripten dpkg-dev
fi

mkdir -p "$WORK"
SRC="$(ls -d "$WORK"/suitesparse-5.12.0* 2>/dev/null | head -n 1 || true)"
if [ -z "$SRC" ]; then
  if ! apt-cache showsrc suitesparse >/dev/null 2>&1 || [ -z "$(apt-cache showsrc suitesparse 2>/dev/null)" ]; then
    # add a deb-src entry mirroring the machine's Debian suites
    $SUDO tee /etc/apt/sources.list.d/branchline-deb-src.sources >/dev/null <<'EOF'
Types: deb-src
URIs: http://deb.debian.org/debian
Suites: bookworm bookworm-updates
Components: main
Signed-By: /usr/share/keyrings/debian-archive-keyring.gpg
EOF
    $SUDO apt-get update -q
  fi
  (cd "$WORK" && apt-get source -q "suitesparse=$SUITESPARSE_DEB_VERSION")
  SRC="$(ls -d "$WORK"/suitesparse-5.12.0* | head -n 1)"
fi

# Debian's emscripten 3.1.6 runs its JS optimiser with the system Node; it needs Debian's modules.
export NODE_PATH="/usr/share/nodejs${NODE_PATH:+:$NODE_PATH}"

OBJ="$WORK/obj"
rm -rf "$OBJ"; mkdir -p "$OBJ"

CFLAGS=(-O3 -DNDEBUG -DNTIMER -fno-strict-aliasing)
if [ "$SIMD" = 1 ]; then CFLAGS+=(-msimd128); fi
CONFIG_INC=(-I"$SRC/SuiteSparse_config")
cc() { emcc "${CFLAGS[@]}" "$@"; }

objs=()
compile() { # output-name source flags...
  local name="$1" src="$2"; shift 2
  cc "$@" -c "$src" -o "$OBJ/$name.o"
  objs+=("$OBJ/$name.o")
}

echo "build.sh: compiling SuiteSparse_config, AMD, COLAMD, BTF"
compile suitesparse_config "$SRC/SuiteSparse_config/SuiteSparse_config.c" "${CONFIG_INC[@]}"
for f in aat 1 2 dump postorder defaults post_tree order control info valid preprocess; do
  compile "amd_i_$f" "$SRC/AMD/Source/amd_$f.c" -DDINT -I"$SRC/AMD/Include" "${CONFIG_INC[@]}"
done
compile colamd "$SRC/COLAMD/Source/colamd.c" -DDINT -I"$SRC/COLAMD/Include" "${CONFIG_INC[@]}"
for f in order maxtrans strongcomp; do
  compile "btf_$f" "$SRC/BTF/Source/btf_$f.c" -DDINT -I"$SRC/BTF/Include" "${CONFIG_INC[@]}"
done

echo "build.sh: compiling KLU (real and complex)"
KLU_INC=(-I"$SRC/KLU/Include" -I"$SRC/AMD/Include" -I"$SRC/COLAMD/Include" -I"$SRC/BTF/Include" "${CONFIG_INC[@]}")
for f in free_symbolic defaults analyze_given analyze memory; do
  compile "klu_$f" "$SRC/KLU/Source/klu_$f.c" "${KLU_INC[@]}"
done
compile klu_d "$SRC/KLU/Source/klu.c" "${KLU_INC[@]}"
compile klu_z "$SRC/KLU/Source/klu.c" -DCOMPLEX "${KLU_INC[@]}"
for f in kernel dump factor free_numeric solve scale refactor tsolve diagnostics sort extract; do
  compile "klu_d_$f" "$SRC/KLU/Source/klu_$f.c" "${KLU_INC[@]}"
  compile "klu_z_$f" "$SRC/KLU/Source/klu_$f.c" -DCOMPLEX "${KLU_INC[@]}"
done

echo "build.sh: compiling METIS 5.1.0 (nested dissection) and its GKlib"
METIS="$SRC/metis-5.1.0"
METIS_INC=(-I"$METIS/include" -I"$METIS/GKlib" -I"$METIS/libmetis" -DNDEBUG2 -std=gnu99 -w)
for f in "$METIS"/GKlib/*.c; do
  b="$(basename "$f" .c)"
  case "$b" in gkregex|getopt|pdb|itemsets|csr|io|fs|rw|graph|tokenizer|b64|evaluate|seq) continue ;; esac
  compile "gk_$b" "$f" "${METIS_INC[@]}"
done
for f in "$METIS"/libmetis/*.c; do
  compile "metis_$(basename "$f" .c)" "$f" "${METIS_INC[@]}"
done

echo "build.sh: compiling the glue and linking"
compile bl_klu "$HERE/glue/bl_klu.c" "${KLU_INC[@]}" -I"$METIS/include"

EXPORTS='["_bl_create","_bl_destroy","_bl_colptr","_bl_rowind","_bl_values","_bl_perm","_bl_set_options","_bl_analyze","_bl_factor","_bl_refactor","_bl_bad_index","_bl_singular_col","_bl_structural_rank","_bl_nblocks","_bl_noffdiag","_bl_lnz","_bl_unz","_bl_nzoff","_bl_symbolic_lnz","_bl_symbolic_unz","_bl_rgrowth","_bl_rcond","_bl_condest","_bl_solve","_bl_tsolve","_bl_logdet","_bl_malloc","_bl_free"]'
LINK=(-O3 -s MODULARIZE=1 -s EXPORT_NAME=createKluModule -s ENVIRONMENT=node
      -s ALLOW_MEMORY_GROWTH=1 -s MAXIMUM_MEMORY=4GB -s INITIAL_MEMORY=32MB -s TOTAL_STACK=4MB
      -s FILESYSTEM=0 -s EXIT_RUNTIME=0 -s NODEJS_CATCH_EXIT=0 -s NODEJS_CATCH_REJECTION=0
      -s "EXPORTED_FUNCTIONS=$EXPORTS")
if [ "$SIMD" = 1 ]; then LINK+=(-msimd128); fi
emcc "${LINK[@]}" "${objs[@]}" -o "$WORK/klu.js"

# The loader is CommonJS (emscripten 3.1.6's ES-module output uses require under Node 20);
# the TypeScript side loads it with createRequire and hands it the wasm bytes itself.
cp "$WORK/klu.js" "$OUT/klu.cjs"
cp "$WORK/klu.wasm" "$OUT/klu.wasm"

EMCC_VERSION="$(emcc --version | head -n 1)"
SIMD_JSON=false; [ "$SIMD" = 1 ] && SIMD_JSON=true
cat > "$OUT/BUILDINFO.json" <<EOF
{
  "suitesparse": "5.12.0 (Debian source package suitesparse $SUITESPARSE_DEB_VERSION)",
  "components": { "SuiteSparse_config": "5.12.0", "AMD": "2.4.6", "COLAMD": "2.9.6", "BTF": "1.2.6", "KLU": "1.3.8", "METIS": "5.1.0" },
  "emscripten": "$EMCC_VERSION",
  "cflags": "${CFLAGS[*]}",
  "simd": $SIMD_JSON,
  "sha256": "$(sha256sum "$OUT/klu.wasm" | cut -d' ' -f1)"
}
EOF
echo "build.sh: wrote $OUT/klu.wasm ($(stat -c %s "$OUT/klu.wasm") bytes), $OUT/klu.cjs, $OUT/BUILDINFO.json"
