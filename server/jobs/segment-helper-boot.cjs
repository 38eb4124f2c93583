// Entry of a segment helper thread started from our TypeScript sources (segment-threads.ts): in a
// Node 20 worker thread tsx's loader reliably offers only its require hook, so the TypeScript module
// is required from this CommonJS file rather than imported.
require('./segment-helper.ts')
