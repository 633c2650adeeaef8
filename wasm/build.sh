#!/usr/bin/env bash
# Rebuild the sparse direct solvers as WebAssembly:
#   klu.wasm      SuiteSparse KLU + AMD + COLAMD + BTF + METIS
#   superlu.wasm  SuperLU (supernodal) + reference BLAS + AMD + METIS
#
#   wasm/build.sh              rebuild into wasm/ (the committed *.wasm, *.cjs, BUILDINFO.json)
#   wasm/build.sh --out DIR    rebuild into DIR instead (CI uses this to test the recipe)
#   wasm/build.sh --no-simd    without -msimd128
#
# Needs Debian (bookworm) with apt: installs Debian's emscripten and f2c and fetches Debian's
# source packages suitesparse, getfem (its copy of SuperLU) and lapack (the reference BLAS).
# Run as root, or with sudo available.
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
GETFEM_DEB_VERSION="5.4.2+dfsg1-3"
LAPACK_DEB_VERSION="3.11.0-2"

SUDO=""
if [ "$(id -u)" != 0 ]; then SUDO="sudo"; fi

# --- toolchain and sources from Debian -----------------------------------------------------------
if ! command -v emcc >/dev/null 2>&1 || ! command -v dpkg-source >/dev/null 2>&1 || ! command -v f2c >/dev/null 2>&1; then
  $SUDO apt-get update -q
  DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -q emscripten dpkg-dev f2c
fi

mkdir -p "$WORK"
# fetch_source PACKAGE VERSION DIR-GLOB: unpack Debian's source package into $WORK once
fetch_source() {
  local pkg="$1" version="$2" glob="$3"
  if [ -z "$(ls -d "$WORK"/$glob 2>/dev/null | head -n 1)" ]; then
    if [ -z "$(apt-cache showsrc "$pkg" 2>/dev/null)" ]; then
      # add a deb-src entry mirroring the machine's Debian suites
      $SUDO tee /etc/apt/sources.list.d/branchline-deb-src.sources >/dev/null <<'EOF'
Types: deb-src
URIs: http://deb.debian.org/debian
Suites: bookworm bookworm-updates
Components: main
Signed-By: /usr/share/keyrings/debian-archive-keyring.gpg
EOF
      $SUDO apt-get update -q >&2
    fi
    (cd "$WORK" && apt-get source -q "$pkg=$version") >&2
  fi
  ls -d "$WORK"/$glob | head -n 1
}
SRC="$(fetch_source suitesparse "$SUITESPARSE_DEB_VERSION" 'suitesparse-5.12.0*')"
GETFEM="$(fetch_source getfem "$GETFEM_DEB_VERSION" 'getfem-5.4.2*')"
LAPACK="$(fetch_source lapack "$LAPACK_DEB_VERSION" 'lapack-3.11.0')"

# Debian's emscripten 3.1.6 runs its JS optimiser with the system Node; it needs Debian's modules.
export NODE_PATH="/usr/share/nodejs${NODE_PATH:+:$NODE_PATH}"

OBJ="$WORK/obj"
rm -rf "$OBJ"; mkdir -p "$OBJ"

CFLAGS=(-O3 -DNDEBUG -DNTIMER -fno-strict-aliasing)
if [ "$SIMD" = 1 ]; then CFLAGS+=(-msimd128); fi
CONFIG_INC=(-I"$SRC/SuiteSparse_config")
cc() { emcc "${CFLAGS[@]}" "$@"; }

# compile LIST-NAME OUTPUT-NAME SOURCE FLAGS...: compile in the background (up to JOBS at a time)
# and append the object to the named list; `finish` waits for them all and fails if one failed.
# A failed compile leaves a NAME.failed marker: waiting on each pid is not reliable (bash forgets
# the status of background jobs that ended long ago and then refuses `wait PID`).
JOBS="${BRANCHLINE_WASM_JOBS:-$(nproc)}"
compile() {
  local list="$1" name="$2" src="$3"; shift 3
  while [ "$(jobs -rp | wc -l)" -ge "$JOBS" ]; do sleep 0.2; done
  { cc "$@" -c "$src" -o "$OBJ/$name.o" || touch "$OBJ/$name.failed"; } &
  eval "$list+=(\"$OBJ/$name.o\")"
}
finish() {
  wait
  if ls "$OBJ"/*.failed >/dev/null 2>&1; then
    echo "build.sh: compiling failed for: $(cd "$OBJ" && ls ./*.failed | sed 's|^./||; s|\.failed$||' | tr '\n' ' ')" >&2
    exit 1
  fi
}
shared=()   # SuiteSparse_config, AMD, METIS, the ordering glue: in both binaries
kluobj=()   # COLAMD, BTF, KLU and its glue
sluobj=()   # SuperLU and its glue (SuperLU has its own COLAMD)
blasobj=()  # the reference BLAS

echo "build.sh: compiling SuiteSparse_config, AMD, COLAMD, BTF"
compile shared suitesparse_config "$SRC/SuiteSparse_config/SuiteSparse_config.c" "${CONFIG_INC[@]}"
for f in aat 1 2 dump postorder defaults post_tree order control info valid preprocess; do
  compile shared "amd_i_$f" "$SRC/AMD/Source/amd_$f.c" -DDINT -I"$SRC/AMD/Include" "${CONFIG_INC[@]}"
done
compile kluobj colamd "$SRC/COLAMD/Source/colamd.c" -DDINT -I"$SRC/COLAMD/Include" "${CONFIG_INC[@]}"
for f in order maxtrans strongcomp; do
  compile kluobj "btf_$f" "$SRC/BTF/Source/btf_$f.c" -DDINT -I"$SRC/BTF/Include" "${CONFIG_INC[@]}"
done

echo "build.sh: compiling KLU (real and complex)"
KLU_INC=(-I"$SRC/KLU/Include" -I"$SRC/AMD/Include" -I"$SRC/COLAMD/Include" -I"$SRC/BTF/Include" "${CONFIG_INC[@]}")
for f in free_symbolic defaults analyze_given analyze memory; do
  compile kluobj "klu_$f" "$SRC/KLU/Source/klu_$f.c" "${KLU_INC[@]}"
done
compile kluobj klu_d "$SRC/KLU/Source/klu.c" "${KLU_INC[@]}"
compile kluobj klu_z "$SRC/KLU/Source/klu.c" -DCOMPLEX "${KLU_INC[@]}"
for f in kernel dump factor free_numeric solve scale refactor tsolve diagnostics sort extract; do
  compile kluobj "klu_d_$f" "$SRC/KLU/Source/klu_$f.c" "${KLU_INC[@]}"
  compile kluobj "klu_z_$f" "$SRC/KLU/Source/klu_$f.c" -DCOMPLEX "${KLU_INC[@]}"
done

echo "build.sh: compiling METIS 5.1.0 (nested dissection) and its GKlib"
METIS="$SRC/metis-5.1.0"
METIS_INC=(-I"$METIS/include" -I"$METIS/GKlib" -I"$METIS/libmetis" -DNDEBUG2 -std=gnu99 -w)
for f in "$METIS"/GKlib/*.c; do
  b="$(basename "$f" .c)"
  case "$b" in gkregex|getopt|pdb|itemsets|csr|io|fs|rw|graph|tokenizer|b64|evaluate|seq) continue ;; esac
  compile shared "gk_$b" "$f" "${METIS_INC[@]}"
done
for f in "$METIS"/libmetis/*.c; do
  compile shared "metis_$(basename "$f" .c)" "$f" "${METIS_INC[@]}"
done
compile shared bl_order "$HERE/glue/bl_order.c" -I"$METIS/include"

echo "build.sh: compiling SuperLU (real and complex; the copy in Debian's getfem source)"
SLU="$GETFEM/superlu"
SLU_FLAGS=(-I"$SLU" -w -DUSE_VENDOR_BLAS -DUSER_ABORT=bs_abort -include "$HERE/glue/bl_superlu_prelude.h")
# the double and double-complex routines a factorisation and its solves need (not the drivers,
# refinement, equilibration and condition estimators: the glue does those), and the shared ones
SLU_FILES=(colamd get_perm_c heap_relax_snode lsame memory mmd relax_snode sp_coletree sp_preorder util dcomplex dlamch superlu_timer)
for t in d z; do
  for f in column_bmod column_dfs copy_to_ucol gstrf gstrs memory myblas2 panel_bmod panel_dfs pivotL pivotgrowth pruneL snode_bmod snode_dfs sp_blas2 sp_blas3 util; do
    SLU_FILES+=("$t$f")
  done
done
for b in "${SLU_FILES[@]}"; do
  extra=()
  # the glue has a TreePostorder without recursion (see bl_superlu.c)
  if [ "$b" = sp_coletree ]; then extra=(-DTreePostorder=bs_recursive_postorder_unused); fi
  compile sluobj "slu_$b" "$SLU/$b.c" "${SLU_FLAGS[@]}" "${extra[@]}"
done
GLUE_INC=(-I"$SLU" -I"$HERE/glue" -I"$SRC/AMD/Include" "${CONFIG_INC[@]}")
compile sluobj bl_superlu "$HERE/glue/bl_superlu.c" "${GLUE_INC[@]}"
compile sluobj bl_superlu_d "$HERE/glue/bl_superlu_kernel.c" "${GLUE_INC[@]}"
compile sluobj bl_superlu_z "$HERE/glue/bl_superlu_kernel.c" -DBS_COMPLEX "${GLUE_INC[@]}"

echo "build.sh: translating the reference BLAS (Debian's lapack source) with f2c and compiling it"
F2C="$WORK/blas-f2c"
rm -rf "$F2C"; mkdir -p "$F2C"
BLAS_ROUTINES=(dtrsv dgemv dtrsm dgemm ztrsv zgemv ztrsm zgemm)
for r in "${BLAS_ROUTINES[@]}"; do cp "$LAPACK/BLAS/SRC/$r.f" "$F2C/"; done
(cd "$F2C" && f2c -a -A ./*.f >/dev/null 2>&1)
cp /usr/include/f2c.h "$F2C/"  # from Debian's f2c package (emscripten has its own system headers)
RENAME=(-Dlsame_=bl_blas_lsame -Dxerbla_=bl_blas_xerbla)
for r in "${BLAS_ROUTINES[@]}"; do RENAME+=(-D${r}_=bl_f2c_$r); done
for r in "${BLAS_ROUTINES[@]}"; do
  compile blasobj "blas_$r" "$F2C/$r.c" -w -I"$F2C" "${RENAME[@]}"
done
compile blasobj bl_blas "$HERE/glue/bl_blas.c"

echo "build.sh: compiling the KLU glue"
compile kluobj bl_klu "$HERE/glue/bl_klu.c" "${KLU_INC[@]}" -I"$METIS/include" -I"$HERE/glue"
finish

# link MODULE-NAME EXPORT-NAME EXPORTS OBJECTS...: one emscripten module (CommonJS loader + wasm)
link() {
  local name="$1" exportName="$2" exports="$3"; shift 3
  local flags=(-O3 -s MODULARIZE=1 -s "EXPORT_NAME=$exportName" -s ENVIRONMENT=node
      -s ALLOW_MEMORY_GROWTH=1 -s MAXIMUM_MEMORY=4GB -s INITIAL_MEMORY=32MB -s TOTAL_STACK=4MB
      -s FILESYSTEM=0 -s EXIT_RUNTIME=0 -s NODEJS_CATCH_EXIT=0 -s NODEJS_CATCH_REJECTION=0
      -s "EXPORTED_FUNCTIONS=$exports")
  if [ "$SIMD" = 1 ]; then flags+=(-msimd128); fi
  emcc "${flags[@]}" "$@" -o "$WORK/$name.js"
  # The loader is CommonJS (emscripten 3.1.6's ES-module output uses require under Node 20);
  # the TypeScript side loads it with createRequire and hands it the wasm bytes itself.
  cp "$WORK/$name.js" "$OUT/$name.cjs"
  cp "$WORK/$name.wasm" "$OUT/$name.wasm"
}

echo "build.sh: linking klu.wasm"
KLU_EXPORTS='["_bl_create","_bl_destroy","_bl_colptr","_bl_rowind","_bl_values","_bl_perm","_bl_set_options","_bl_analyze","_bl_factor","_bl_refactor","_bl_bad_index","_bl_singular_col","_bl_structural_rank","_bl_nblocks","_bl_noffdiag","_bl_lnz","_bl_unz","_bl_nzoff","_bl_symbolic_lnz","_bl_symbolic_unz","_bl_rgrowth","_bl_rcond","_bl_condest","_bl_solve","_bl_tsolve","_bl_logdet","_bl_malloc","_bl_free"]'
link klu createKluModule "$KLU_EXPORTS" "${shared[@]}" "${kluobj[@]}"

echo "build.sh: linking superlu.wasm"
SLU_EXPORTS='["_bs_create","_bs_destroy","_bs_colptr","_bs_rowind","_bs_values","_bs_perm","_bs_set_options","_bs_set_tuning","_bs_analyze","_bs_symbolic","_bs_factor","_bs_refactor","_bs_bad_index","_bs_singular_col","_bs_lnz","_bs_unz","_bs_stored","_bs_rgrowth","_bs_rcond","_bs_condest","_bs_solve","_bs_tsolve","_bs_logdet","_bs_malloc","_bs_free"]'
link superlu createSuperluModule "$SLU_EXPORTS" "${shared[@]}" "${sluobj[@]}" "${blasobj[@]}"

EMCC_VERSION="$(emcc --version | sed -n 1p)"  # sed reads it all: head would break the pipe
SIMD_JSON=false; [ "$SIMD" = 1 ] && SIMD_JSON=true
cat > "$OUT/BUILDINFO.json" <<EOF
{
  "suitesparse": "5.12.0 (Debian source package suitesparse $SUITESPARSE_DEB_VERSION)",
  "components": { "SuiteSparse_config": "5.12.0", "AMD": "2.4.6", "COLAMD": "2.9.6", "BTF": "1.2.6", "KLU": "1.3.8", "METIS": "5.1.0" },
  "superlu": "3.0 (the copy in Debian source package getfem $GETFEM_DEB_VERSION)",
  "blas": "reference BLAS 3.11.0 (Debian source package lapack $LAPACK_DEB_VERSION, translated by Debian's f2c $(dpkg-query -W -f='${Version}' f2c 2>/dev/null || echo unknown))",
  "emscripten": "$EMCC_VERSION",
  "cflags": "${CFLAGS[*]}",
  "simd": $SIMD_JSON,
  "sha256": "$(sha256sum "$OUT/klu.wasm" | cut -d' ' -f1)",
  "superluSha256": "$(sha256sum "$OUT/superlu.wasm" | cut -d' ' -f1)"
}
EOF
echo "build.sh: wrote $OUT/klu.wasm ($(stat -c %s "$OUT/klu.wasm") bytes), $OUT/superlu.wasm ($(stat -c %s "$OUT/superlu.wasm") bytes), the loaders and BUILDINFO.json"
