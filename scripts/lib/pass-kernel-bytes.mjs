// Assembles server/workers/pass-kernel.wat into WebAssembly bytes with wabt (the WebAssembly binary toolkit's own
// assembler, built for JavaScript). Used by scripts/build-pass-kernel.mjs, which writes the bytes the server loads,
// and by the unit test that checks those bytes still match the text.
import { readFile } from 'node:fs/promises'
import wabtModule from 'wabt'

export const KERNEL_TEXT = new URL('../../server/workers/pass-kernel.wat', import.meta.url)

/** The kernel's module bytes, assembled from its text. */
export async function assemblePassKernel() {
  const wabt = await wabtModule()
  const parsed = wabt.parseWat('pass-kernel.wat', await readFile(KERNEL_TEXT, 'utf8'), { simd: true, threads: true })
  try {
    // wabt's own validate() ignores the features given to parseWat (it refuses shared memory), so the engine that
    // will run the bytes validates them.
    const bytes = new Uint8Array(parsed.toBinary({}).buffer)
    if (!WebAssembly.validate(bytes)) throw new Error('pass-kernel.wat assembled into an invalid module')
    return bytes
  }
  finally {
    parsed.destroy()
  }
}

/** The TypeScript module that carries the bytes (base64), as written to server/workers/pass-kernel-wasm.ts. */
export function kernelModuleSource(bytes) {
  const base64 = Buffer.from(bytes).toString('base64')
  return `// Written by scripts/build-pass-kernel.mjs from pass-kernel.wat; do not edit (tests/unit/server/pass-kernel.test.ts
// checks that it matches the text).
export const PASS_KERNEL_WASM = '${base64}'
`
}
