// The data shapes shared by discovery, the numeric engine, the sandbox, the CLI, the language
// server and the client: one import point. What discovery finds is defined in op.ts, what a check
// produces in outcome.ts; both are plain JSON-serialisable data that crosses into the sandbox.
export * from './op';
export * from './outcome';
