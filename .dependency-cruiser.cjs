/**
 * Pewter's layer rules (DEVELOPERS.md "Layers and rules"), checked by `npm run lint:deps` and by `npm test`.
 * Each rule below states one sentence of those rules; a breach names the importing and the imported file.
 * @type {import('dependency-cruiser').IConfiguration}
 */
module.exports = {
  forbidden: [
    {
      name: 'no-circular',
      severity: 'error',
      comment: 'No import cycles: a cycle makes module start-up order matter and hides a missing layer.',
      from: {},
      to: { circular: true },
    },
    {
      name: 'shared-is-pure',
      severity: 'error',
      comment: 'shared/ runs in the browser, a worker thread and the CLI: it never imports server/, src/, tests/, bench/ or scripts/.',
      from: { path: '^shared/' },
      to: { path: '^(server|src|tests|bench|scripts)/' },
    },
    {
      name: 'shared-uses-no-node',
      severity: 'error',
      comment: 'shared/ uses no Node API (node: built-ins) so that the same code runs in the browser.',
      from: { path: '^shared/' },
      to: { dependencyTypes: ['core'] },
    },
    {
      name: 'sheet-never-imports-engine',
      severity: 'error',
      comment: 'The sheet language (shared/sheet) knows nothing of the engine, the exports or the CSV readers.',
      from: { path: '^shared/sheet/' },
      to: { path: '^shared/(engine|export|data)/' },
    },
    {
      name: 'engine-takes-only-compiled-sheet',
      severity: 'error',
      comment: 'shared/engine may import the sheet compiler\'s output form (shared/sheet/compiled.ts) and nothing else of the language.',
      from: { path: '^shared/engine/' },
      to: { path: '^shared/sheet/', pathNot: '^shared/sheet/compiled[.]ts$' },
    },
    {
      name: 'data-below-engine',
      severity: 'error',
      comment: 'shared/data (CSV traces, units) sits below the engine: it never imports shared/engine or shared/export.',
      from: { path: '^shared/data/' },
      to: { path: '^shared/(engine|export)/' },
    },
    {
      name: 'api-schemas-stand-alone',
      severity: 'error',
      comment: 'shared/api holds the zod schemas of requests and replies; they depend on no other part of the code.',
      from: { path: '^shared/api/' },
      to: { path: '^(shared/(sheet|engine|data|export)|server|src)/' },
    },
    {
      name: 'client-reaches-server-only-over-http',
      severity: 'error',
      comment: 'The client (src/) imports shared/ but never server/ code.',
      from: { path: '^src/' },
      to: { path: '^(server|tests|bench|scripts)/' },
    },
    {
      name: 'server-never-imports-client',
      severity: 'error',
      comment: 'Server code never imports the client.',
      from: { path: '^server/' },
      to: { path: '^(src|tests|bench)/' },
    },
    {
      name: 'routes-never-touch-the-database',
      severity: 'error',
      comment: 'Routes validate, authorize and call a service; the database (server/db, drizzle-orm, pg) is reached by services only.',
      from: { path: '^server/routes/' },
      to: { path: '^server/db/|(^|/)node_modules/(drizzle-orm|pg|pg-boss)/' },
    },
    {
      name: 'services-below-http',
      severity: 'error',
      comment: 'Services hold the logic and know nothing of HTTP plumbing: they never import routes or middleware.',
      from: { path: '^server/services/' },
      to: { path: '^server/(routes|middleware)/' },
    },
    {
      name: 'db-is-the-bottom',
      severity: 'error',
      comment: 'server/db (schema, client, seed) never imports routes or middleware.',
      from: { path: '^server/db/' },
      to: { path: '^server/(routes|middleware)/' },
    },
    {
      name: 'bench-does-not-use-tests',
      severity: 'error',
      comment: 'Benchmarks stand on their own: they never import test files or test fixtures.',
      from: { path: '^bench/' },
      to: { path: '^tests/' },
    },
    {
      name: 'no-test-imports-in-product',
      severity: 'error',
      comment: 'Product code never imports a test file or a test and benchmark fixture (fixtures/).',
      from: { path: '^(shared|server|src|scripts)/' },
      to: { path: '^(tests|fixtures)/' },
    },
    {
      name: 'no-test-file-imports',
      severity: 'error',
      comment: 'A test file never imports another test file (its suite would run twice); share code through tests/helpers or a fixture.',
      from: {},
      to: { path: '[.]test[.]ts$' },
    },
  ],
  options: {
    doNotFollow: { path: 'node_modules' },
    exclude: { path: '^(node_modules|dist|\\.pewter|test-artifacts)/' },
    tsPreCompilationDeps: true,
    tsConfig: { fileName: 'tsconfig.app.json' },
    enhancedResolveOptions: {
      exportsFields: ['exports'],
      conditionNames: ['import', 'require', 'node', 'default', 'types'],
      extensions: ['.ts', '.vue', '.js', '.mjs', '.cjs', '.d.ts', '.json'],
      mainFields: ['module', 'main', 'types', 'typings'],
    },
    reporterOptions: {
      text: { highlightFocused: true },
    },
  },
}
