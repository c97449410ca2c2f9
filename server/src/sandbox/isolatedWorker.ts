// The isolated mode's interpreter process (built to dist/isolated-worker.js): loads QuickJS
// compiled to WebAssembly once, then runs one op's check per IPC message in a fresh interpreter
// runtime, off the language server's thread and address space (the interpreter's WebAssembly
// memory can grow past its own limit, and only a separate process can be killed for it).
// Nothing of Node is handed to the interpreter.
import { getQuickJS, type QuickJSWASMModule } from 'quickjs-emscripten';
import { runIsolatedJob, type IsolatedAnswer, type IsolatedJob } from './isolatedEval';

/** Host → interpreter process: one job. */
export interface IsolatedRequest extends IsolatedJob {
  id: number;
}

/** Interpreter process → host: its answer. */
export type IsolatedReply = IsolatedAnswer & { id: number };

let quickjs: Promise<QuickJSWASMModule> | undefined;

/**
 * Size of the interpreter's WebAssembly memory, in bytes. quickjs-emscripten 0.32 keeps the
 * Emscripten module (with its HEAPU8 view of that memory) in a field it does not declare; 0 when
 * a later version moves it (the interpreter's own limit then stands alone).
 */
function wasmHeapBytes(module: QuickJSWASMModule): number {
  const heap = (module as unknown as { module?: { HEAPU8?: Uint8Array } }).module?.HEAPU8;
  return heap ? heap.buffer.byteLength : 0;
}

async function handle(request: IsolatedRequest): Promise<void> {
  let reply: IsolatedReply;
  try {
    quickjs ??= getQuickJS();
    const module = await quickjs;
    reply = { id: request.id, ...runIsolatedJob(module, request, () => wasmHeapBytes(module)) };
  } catch (e) {
    reply = {
      id: request.id,
      ok: false,
      error: `the interpreter could not start: ${(e as Error).message}`,
      timedOut: false,
      duringLoad: false,
      output: '',
      elapsedMs: 0,
      poisoned: true,
    };
  }
  // A reply marked poisoned (out of memory, an abort) makes the host end this process and start
  // a fresh one: the WebAssembly instance may be unusable.
  process.send?.(reply);
}

if (typeof process.send === 'function') {
  process.on('message', (request: IsolatedRequest) => void handle(request));
  // The host going away must not leave this process behind.
  process.on('disconnect', () => process.exit(0));
}
