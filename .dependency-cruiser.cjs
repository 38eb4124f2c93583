/**
 * Pewter's layer rules (DEVELOPERS.md "Layers and rules"), checked by `npm run lint:deps` and by `npm test`.
 * Each rule below states one sentence of those rules; a breach names the importing and the imported file.
 */

/** A path pattern stands for `{ path }`; anything else is a dependency-cruiser condition as it is. */
const where = (condition) => (typeof condition === 'string' ? { path: condition } : condition)

/**
 * One forbidden import: a file matching `from` must not import one matching `to`.
 * @returns {import('dependency-cruiser').IForbiddenRuleType}
 */
const forbid = ([name, from, to, comment]) => ({ name, severity: 'error', comment, from: where(from), to: where(to) })

// [name, importing files, imported files, the rule's sentence]
const rules = [
  ['no-circular', {}, { circular: true },
    'No import cycles: a cycle makes module start-up order matter and hides a missing layer.'],
  ['shared-is-pure', '^shared/', '^(server|src|tests|bench|scripts)/',
    'shared/ runs in the browser, a worker thread and the CLI: it never imports server/, src/, tests/, bench/ or scripts/.'],
  ['shared-uses-no-node', '^shared/', { dependencyTypes: ['core'] },
    'shared/ uses no Node API (node: built-ins) so that the same code runs in the browser.'],
  ['sheet-never-imports-engine', '^shared/sheet/', '^shared/(engine|export|data)/',
    'The sheet language (shared/sheet) knows nothing of the engine, the exports or the CSV readers.'],
  ['engine-takes-only-compiled-sheet', '^shared/engine/', { path: '^shared/sheet/', pathNot: '^shared/sheet/compiled[.]ts$' },
    'shared/engine may import the sheet compiler\'s output form (shared/sheet/compiled.ts) and nothing else of the language.'],
  ['data-below-engine', '^shared/data/', '^shared/(engine|export)/',
    'shared/data (CSV traces, units) sits below the engine: it never imports shared/engine or shared/export.'],
  ['api-schemas-stand-alone', '^shared/api/', '^(shared/(sheet|engine|data|export)|server|src)/',
    'shared/api holds the zod schemas of requests and replies; they depend on no other part of the code.'],
  ['client-reaches-server-only-over-http', '^src/', '^(server|tests|bench|scripts)/',
    'The client (src/) imports shared/ but never server/ code.'],
  ['server-never-imports-client', '^server/', '^(src|tests|bench)/',
    'Server code never imports the client.'],
  ['routes-never-touch-the-database', '^server/routes/', '^server/db/|(^|/)node_modules/(drizzle-orm|pg|pg-boss)/',
    'Routes validate, authorize and call a service; the database (server/db, drizzle-orm, pg) is reached by services only.'],
  ['services-below-http', '^server/services/', '^server/(routes|middleware)/',
    'Services hold the logic and know nothing of HTTP plumbing: they never import routes or middleware.'],
  ['db-is-the-bottom', '^server/db/', '^server/(routes|middleware)/',
    'server/db (schema, client, seed) never imports routes or middleware.'],
  ['bench-does-not-use-tests', '^bench/', '^tests/',
    'Benchmarks stand on their own: they never import test files or test fixtures.'],
  ['no-test-imports-in-product', '^(shared|server|src|scripts)/', '^(tests|fixtures)/',
    'Product code never imports a test file or a test and benchmark fixture (fixtures/).'],
  ['no-test-file-imports', {}, '[.]test[.]ts$',
    'A test file never imports another test file (its suite would run twice); share code through tests/helpers or a fixture.'],
]

/** @type {import('dependency-cruiser').IConfiguration} */
module.exports = {
  forbidden: rules.map(forbid),
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
