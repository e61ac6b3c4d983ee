// Writes server/workers/pass-kernel-wasm.ts from server/workers/pass-kernel.wat. Run after editing the kernel's text:
//   node scripts/build-pass-kernel.mjs
import { writeFile } from 'node:fs/promises'
import { assemblePassKernel, kernelModuleSource } from './lib/pass-kernel-bytes.mjs'

const bytes = await assemblePassKernel()
await writeFile(new URL('../server/workers/pass-kernel-wasm.ts', import.meta.url), kernelModuleSource(bytes))
console.log(`pass kernel: ${bytes.length} bytes`)
