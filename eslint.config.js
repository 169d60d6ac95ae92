import js from '@eslint/js'
import tseslint from 'typescript-eslint'
import pluginVue from 'eslint-plugin-vue'
import globals from 'globals'
import prettier from 'eslint-config-prettier/flat'
import boundaries from 'eslint-plugin-boundaries'
import { readdirSync } from 'node:fs'

// Each folder under server/ is one feature. A feature's repository (its SQL) is private to it: other features
// go through its service, so a table's rules live in one place. Generated per feature, because the rule is
// "not another feature's repository", and that needs each feature named.
const features = readdirSync(new URL('./server', import.meta.url), { withFileTypes: true })
  .filter((d) => d.isDirectory())
  .map((d) => d.name)
const featureBoundaries = {
  files: ['server/**/*.ts'],
  plugins: { boundaries },
  settings: {
    'boundaries/elements': features.map((f) => ({ type: f, pattern: `server/${f}` })),
    // Imports are written without the .ts ending; the resolver must know to try it.
    'import/resolver': { node: { extensions: ['.ts', '.js'] } },
    'boundaries/files': [{ category: 'repository', pattern: 'server/*/*.repository.ts' }],
  },
  rules: {
    'boundaries/dependencies': [
      'error',
      {
        default: 'allow',
        policies: features.map((f) => ({
          from: { element: { type: f } },
          disallow: {
            to: {
              element: { types: { anyOf: features.filter((g) => g !== f) } },
              file: { categories: 'repository' },
            },
          },
        })),
      },
    ],
  },
}

export default tseslint.config(
  {
    ignores: [
      'dist/**',
      'node_modules/**',
      'storage/**',
      'db/*.sqlite*',
      'tests/.artifacts/**',
      'bench/.data/**',
      'tmp-smoke/**',
      'server/**/*.as.ts',
    ],
  },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  ...pluginVue.configs['flat/recommended'],
  {
    files: ['**/*.vue'],
    languageOptions: { parserOptions: { parser: tseslint.parser } },
  },
  {
    languageOptions: { globals: { ...globals.node, ...globals.browser } },
    rules: {
      'vue/multi-word-component-names': 'off',
      'vue/max-attributes-per-line': 'off',
      'vue/singleline-html-element-content-newline': 'off',
      'vue/html-self-closing': 'off',
      'vue/html-indent': 'off',
      'vue/html-closing-bracket-newline': 'off',
      'vue/multiline-html-element-content-newline': 'off',
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_' }],
      '@typescript-eslint/no-namespace': 'off',
      // Binary chunk parsing trims NUL padding with regular expressions.
      'no-control-regex': 'off',
    },
  },
  {
    // Migrations are typed Kysely<any> on purpose: frozen in time, independent of the app's types.
    files: ['db/migrations/**', 'server/core/database.ts'],
    rules: { '@typescript-eslint/no-explicit-any': 'off' },
  },
  featureBoundaries,
  // Layout belongs to Prettier (`npm run format`); this turns off every stylistic rule that would fight it.
  prettier,
)
