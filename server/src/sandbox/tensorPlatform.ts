// Source text (part of the context setup script) that gives TensorFlow.js a platform inside a
// sandbox context, so a user's module that imports the library runs without a shim of its own.
//
// What the library probes for (read in @tensorflow/tfjs-core 4.22, dist/flags.js,
// dist/device_util.js, dist/global_util.js, dist/platforms/platform_*.js, dist/engine.js):
// - IS_BROWSER: `window.document` or a `WorkerGlobalScope` global; IS_NODE: `process.versions.node`.
//   Only when one of them holds does the library register a platform of its own (browser: fetch,
//   performance, TextEncoder, timers, postMessage; Node: require('util'), process.hrtime). A vm
//   context has neither, so `env().platform` stays undefined and the first tensor fails with
//   "Cannot read properties of undefined (reading 'isTypedArray')".
// - The global namespace it keeps its engine in: `window`, `global`, `process` or `self` (the
//   context setup already defines `self`), under the key `_tfengine`, created once per context by
//   `ns._tfengine = new Engine(new Environment(ns))` when the library's core module loads.
//
// Faking `window`, `process` or `WorkerGlobalScope` would send the library (and every other
// package in the bundle) down code paths for a browser or for Node that need far more of the
// host. Instead the setup watches the `_tfengine` key: the moment the library stores its engine
// there, the engine's environment gets the platform below (the library's own
// `Environment.setPlatform`), before any of the module's code creates a tensor. The platform is
// made of context functions only and hands out nothing of the host: `isTypedArray` (the one
// member every tensor needs), a clock that reads the fixed time user code sees, UTF-8 text
// coding (for string tensors), and a `fetch` and a timer that refuse with a clear message.

/** The platform's name, as `tf.env().platformName` reports it inside a check. */
export const TENSOR_PLATFORM_NAME = 'gradient-probe-sandbox';

/**
 * Statements run inside CONTEXT_SETUP_SOURCE's function, where `g` is the context's global
 * object and `fixedNow` the fixed clock value. Defines the non-enumerable accessor
 * `g._tfengine`.
 */
export const TENSOR_LIBRARY_PLATFORM_SOURCE = String.raw`
  {
    const typedArrayTag = Object.getOwnPropertyDescriptor(Object.getPrototypeOf(Uint8Array.prototype), Symbol.toStringTag).get;
    const applyFn = Reflect.apply;
    const encodeUri = encodeURIComponent;
    const decodeUri = decodeURIComponent;
    const fromCharCode = String.fromCharCode;
    const charCodeAt = String.prototype.charCodeAt;
    const U8 = Uint8Array;
    const PromiseCtor = Promise;
    const ErrorCtor = Error;
    const isUtf8 = (encoding) => encoding === 'utf-8' || encoding === 'utf8' || encoding === undefined;
    const platform = {
      // The element types a tensor can be backed by; recognised by their internal type, so an
      // array made in any realm counts (instanceof would not).
      isTypedArray(a) {
        if (a === null || typeof a !== 'object') return false;
        let tag;
        try { tag = applyFn(typedArrayTag, a, []); } catch (e) { return false; }
        return tag === 'Float32Array' || tag === 'Int32Array' || tag === 'Uint8Array' || tag === 'Uint8ClampedArray';
      },
      now() { return fixedNow; },
      fetch(path) {
        return PromiseCtor.reject(new ErrorCtor('fetching "' + String(path) + '" is not possible here: code checked in the sandbox has no network or file access'));
      },
      encode(text, encoding) {
        if (!isUtf8(encoding)) throw new ErrorCtor('only utf-8 text can be encoded in the sandbox (asked for ' + String(encoding) + ')');
        // encodeURIComponent gives UTF-8 as %XX escapes; each escape is one byte.
        const escaped = encodeUri(String(text));
        const bytes = [];
        for (let i = 0; i < escaped.length; i++) {
          if (escaped[i] === '%') { bytes[bytes.length] = parseInt(escaped.slice(i + 1, i + 3), 16); i += 2; }
          else bytes[bytes.length] = applyFn(charCodeAt, escaped, [i]);
        }
        const out = new U8(bytes.length);
        for (let i = 0; i < bytes.length; i++) out[i] = bytes[i];
        return out;
      },
      decode(bytes, encoding) {
        if (!isUtf8(encoding)) throw new ErrorCtor('only utf-8 text can be decoded in the sandbox (asked for ' + String(encoding) + ')');
        let escaped = '';
        for (let i = 0; i < bytes.length; i++) escaped += '%' + (bytes[i] < 16 ? '0' : '') + bytes[i].toString(16);
        return decodeUri(escaped);
      },
      setTimeoutCustom() {
        throw new ErrorCtor('timers are not available to code checked in the sandbox: checks call the forward synchronously');
      },
    };
    let engine;
    Object.defineProperty(g, '_tfengine', {
      configurable: true,
      enumerable: false,
      get() { return engine; },
      set(value) {
        engine = value;
        try {
          const environment = value !== null && typeof value === 'object' ? value.ENV : undefined;
          if (environment && typeof environment.setPlatform === 'function' && environment.platform == null) {
            environment.setPlatform('${TENSOR_PLATFORM_NAME}', platform);
          }
        } catch (e) { /* not the library's engine: leave it as it is */ }
      },
    });
  }
`;
