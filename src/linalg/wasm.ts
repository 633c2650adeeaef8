/**
 * Loads the two sparse direct solvers compiled to WebAssembly: SuiteSparse KLU (wasm/klu.wasm
 * with its emscripten loader wasm/klu.cjs) and SuperLU (wasm/superlu.wasm, wasm/superlu.cjs).
 * Loaded once per process, at import time (top-level await), so that every solver call
 * afterwards is synchronous. Each module has its own linear memory (up to 4 GiB each).
 *
 * BRANCHLINE_WASM_DIR overrides the folder (CI points it at freshly rebuilt binaries).
 */
import { createRequire } from 'node:module';
import { existsSync, readFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

/** The C glue's exports (see wasm/glue/bl_klu.c); pointers are unsigned 32-bit offsets. */
export interface KluExports {
  _bl_create(n: number, nnz: number, isComplex: number): number;
  _bl_destroy(h: number): void;
  _bl_colptr(h: number): number;
  _bl_rowind(h: number): number;
  _bl_values(h: number): number;
  _bl_perm(h: number): number;
  _bl_set_options(h: number, btf: number, scale: number, tol: number): void;
  _bl_analyze(h: number, ordering: number): number;
  _bl_factor(h: number): number;
  _bl_refactor(h: number): number;
  _bl_bad_index(h: number): number;
  _bl_singular_col(h: number): number;
  _bl_structural_rank(h: number): number;
  _bl_nblocks(h: number): number;
  _bl_noffdiag(h: number): number;
  _bl_lnz(h: number): number;
  _bl_unz(h: number): number;
  _bl_nzoff(h: number): number;
  _bl_symbolic_lnz(h: number): number;
  _bl_symbolic_unz(h: number): number;
  _bl_rgrowth(h: number): number;
  _bl_rcond(h: number): number;
  _bl_condest(h: number): number;
  _bl_solve(h: number, b: number, nrhs: number): number;
  _bl_tsolve(h: number, b: number, nrhs: number, conj: number): number;
  _bl_logdet(h: number, out: number): number;
  _bl_malloc(bytes: number): number;
  _bl_free(p: number): void;
  HEAPU8: Uint8Array;
  HEAP32: Int32Array;
  HEAPF64: Float64Array;
}

/** The SuperLU glue's exports (see wasm/glue/bl_superlu.c). */
export interface SuperluExports {
  _bs_create(n: number, nnz: number, isComplex: number): number;
  _bs_destroy(h: number): void;
  _bs_colptr(h: number): number;
  _bs_rowind(h: number): number;
  _bs_values(h: number): number;
  _bs_perm(h: number): number;
  _bs_set_options(h: number, scale: number, tol: number): void;
  _bs_set_tuning(ispec: number, value: number): void;
  _bs_analyze(h: number, ordering: number): number;
  _bs_symbolic(h: number, out: number): number;
  _bs_factor(h: number): number;
  _bs_refactor(h: number): number;
  _bs_bad_index(h: number): number;
  _bs_singular_col(h: number): number;
  _bs_lnz(h: number): number;
  _bs_unz(h: number): number;
  _bs_stored(h: number): number;
  _bs_rgrowth(h: number): number;
  _bs_rcond(h: number): number;
  _bs_condest(h: number): number;
  _bs_solve(h: number, b: number, nrhs: number): number;
  _bs_tsolve(h: number, b: number, nrhs: number, conj: number): number;
  _bs_logdet(h: number, out: number): number;
  _bs_malloc(bytes: number): number;
  _bs_free(p: number): void;
  HEAPU8: Uint8Array;
  HEAP32: Int32Array;
  HEAPF64: Float64Array;
}

function findWasmDir(): string {
  const override = process.env.BRANCHLINE_WASM_DIR;
  if (override) {
    const dir = resolve(override);
    for (const file of ['klu.wasm', 'superlu.wasm']) {
      if (!existsSync(join(dir, file))) throw new Error(`BRANCHLINE_WASM_DIR=${override}: no ${file} there`);
    }
    return dir;
  }
  let dir = dirname(fileURLToPath(import.meta.url));
  for (;;) {
    const candidate = join(dir, 'wasm');
    if (['klu.wasm', 'klu.cjs', 'superlu.wasm', 'superlu.cjs'].every((f) => existsSync(join(candidate, f)))) return candidate;
    const parent = dirname(dir);
    if (parent === dir) {
      throw new Error('cannot find wasm/klu.wasm and wasm/superlu.wasm above ' + fileURLToPath(import.meta.url) + ' (is the package installed completely?)');
    }
    dir = parent;
  }
}

export const wasmDirectory = findWasmDir();

async function load<T>(name: string): Promise<T> {
  const require = createRequire(import.meta.url);
  const factory = require(join(wasmDirectory, `${name}.cjs`)) as (opts: object) => Promise<T>;
  // Debian's emscripten 3.1.6 loader cannot fetch a file path under Node 20: hand it the bytes.
  const wasmBinary = readFileSync(join(wasmDirectory, `${name}.wasm`));
  return factory({
    wasmBinary,
    print: () => undefined,
    printErr: () => undefined,
  });
}

export const [klu, superlu] = await Promise.all([load<KluExports>('klu'), load<SuperluExports>('superlu')]);

/** Current size of the wasm linear memories in bytes (they only grow). */
export function wasmMemoryBytes(): number {
  return klu.HEAPU8.length + superlu.HEAPU8.length;
}
