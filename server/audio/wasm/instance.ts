// Instances of the WebAssembly kernels (the *.as.ts sources beside this file,
// compiled by `npm run build:wasm` into *.wasm.ts modules holding the binary in
// base64). One instance per kernel and thread; each keeps a scratch area past
// whatever the module placed in its memory, grown on demand, where the caller
// lays out the samples it hands over.

export interface KernelInstance<E> {
  exports: E
  /** Byte offset of the scratch area in the kernel's memory. */
  base: number
  /** The memory's buffer, after growing it to hold `bytes` of scratch (views on an older buffer are stale). */
  scratch(bytes: number): ArrayBuffer
}

export function instantiate<E extends { memory: WebAssembly.Memory }>(base64: string): KernelInstance<E> {
  const exports = new WebAssembly.Instance(new WebAssembly.Module(Buffer.from(base64, 'base64')), {})
    .exports as unknown as E
  const memory = exports.memory
  const base = memory.buffer.byteLength
  return {
    exports,
    base,
    scratch(bytes) {
      const need = base + bytes
      if (memory.buffer.byteLength < need) memory.grow(Math.ceil((need - memory.buffer.byteLength) / 65536))
      return memory.buffer
    },
  }
}
