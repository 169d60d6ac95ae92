import js from '@eslint/js'
import tseslint from 'typescript-eslint'
import pluginVue from 'eslint-plugin-vue'
import globals from 'globals'
import prettier from 'eslint-config-prettier/flat'

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
  // Layout belongs to Prettier (`npm run format`); this turns off every stylistic rule that would fight it.
  prettier,
)
