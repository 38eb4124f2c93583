// ESLint flat config: the recommended sets of ESLint, typescript-eslint and eslint-plugin-vue, kept to
// defects (unused code, unsafe patterns, Vue template mistakes); layout is left alone (no formatting rules).
import js from '@eslint/js'
import tseslint from 'typescript-eslint'
import pluginVue from 'eslint-plugin-vue'
import globals from 'globals'

export default tseslint.config(
  { ignores: ['dist/**', '.pewter/**', 'test-artifacts/**', 'node_modules/**', 'drizzle/**', 'shared/engine/solvers/odex-lib.js', 'shared/engine/solvers/odex-lib.d.ts', 'scripts/cli-bundle.d.mts'] },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  ...pluginVue.configs['flat/recommended'],
  {
    files: ['**/*.vue'],
    languageOptions: { parserOptions: { parser: tseslint.parser } },
  },
  {
    languageOptions: {
      ecmaVersion: 2023,
      sourceType: 'module',
      globals: { ...globals.browser, ...globals.node },
    },
    rules: {
      // unused code is an error; a leading _ marks an intentionally unused parameter or binding
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_', caughtErrors: 'none', ignoreRestSiblings: true }],
      // `any` and non-null assertions are reviewed by hand where the types cannot say more
      '@typescript-eslint/no-explicit-any': 'off',
      '@typescript-eslint/no-non-null-assertion': 'off',
      // published coefficients (Lanczos, Dormand–Prince, reference values) are quoted digit for digit
      // from their source, even past double precision: the literal is the citation
      'no-loss-of-precision': 'off',
      'vue/multi-word-component-names': 'error',
      // one test-id attribute: data-testid (what Playwright's getByTestId reads)
      'vue/no-restricted-static-attribute': ['error', { key: 'data-test', message: 'Use data-testid, the one test-id attribute.' }],
      'vue/no-restricted-v-bind': ['error', { argument: 'data-test', message: 'Use data-testid, the one test-id attribute.' }],
      // presentation rules of the Vue recommended set: the code base keeps its own layout
      'vue/max-attributes-per-line': 'off',
      'vue/singleline-html-element-content-newline': 'off',
      'vue/multiline-html-element-content-newline': 'off',
      'vue/html-self-closing': 'off',
      'vue/html-indent': 'off',
      'vue/html-closing-bracket-newline': 'off',
      'vue/attributes-order': 'off',
      'vue/first-attribute-linebreak': 'off',
      'vue/attribute-hyphenation': 'off',
      'vue/v-on-event-hyphenation': 'off',
      'vue/html-closing-bracket-spacing': 'off',
      'vue/mustache-interpolation-spacing': 'off',
    },
  },
  {
    // CommonJS boot files (worker-thread loaders) load with require()
    files: ['**/*.cjs'],
    languageOptions: { sourceType: 'commonjs' },
    rules: { '@typescript-eslint/no-require-imports': 'off' },
  },
)
