// ESLint flat config: typescript-eslint's type-checked recommended rules over every TypeScript file.
// Run with `npm run lint`; `npm test` runs it before the suite.
import js from '@eslint/js';
import tseslint from 'typescript-eslint';

export default tseslint.config(
  {
    ignores: ['client/dist/**', 'node_modules/**', '.tmp/**', 'data/**', 'tests/screenshots/**', 'dist/**'],
  },
  {
    linterOptions: { reportUnusedDisableDirectives: 'error' },
  },
  js.configs.recommended,
  ...tseslint.configs.recommendedTypeChecked,
  {
    languageOptions: {
      parserOptions: {
        projectService: true,
        tsconfigRootDir: import.meta.dirname,
      },
    },
    rules: {
      '@typescript-eslint/consistent-type-imports': 'error',
      // Off on purpose: its 24 findings were all `String(x ?? '')` of ids and names read from parsed JSON or GeoJSON
      // properties (type `unknown`, which `??` narrows to `{}`), where converting a string or number is intended;
      // the rule cannot tell those from a real object.
      '@typescript-eslint/no-base-to-string': 'off',
      // Off on purpose: an `async` function without `await` is how the SQLite store (and test doubles) implement the
      // Promise-returning Store interface; `async` turns their throws into rejections, which dropping it would lose.
      '@typescript-eslint/require-await': 'off',
      // Same convention as tsc's noUnusedLocals/noUnusedParameters: a leading underscore marks a value left out on
      // purpose (e.g. `const { a: _a, ...rest } = x`).
      '@typescript-eslint/no-unused-vars': [
        'error',
        { argsIgnorePattern: '^_', varsIgnorePattern: '^_', destructuredArrayIgnorePattern: '^_', caughtErrorsIgnorePattern: '^_' },
      ],
    },
  },
  {
    // Tests read the JSON that the CLI and the HTTP API print (`JSON.parse` gives `any`) and then assert on its fields.
    // The no-unsafe-* rules report about 400 such reads there (and no-explicit-any the helpers' `Record<string, any>`
    // results); typing each one adds casts, not safety, because the assertions themselves fail on a wrong shape.
    // They stay on for shared/, server/ and client/.
    files: ['tests/**/*.ts'],
    rules: {
      '@typescript-eslint/no-unsafe-member-access': 'off',
      '@typescript-eslint/no-unsafe-assignment': 'off',
      '@typescript-eslint/no-unsafe-call': 'off',
      '@typescript-eslint/no-unsafe-argument': 'off',
      '@typescript-eslint/no-unsafe-return': 'off',
      '@typescript-eslint/no-explicit-any': 'off',
    },
  },
  {
    // Plain JavaScript files (this config, bin/, the build script) are outside the TypeScript project: no type-aware
    // rules there.
    files: ['**/*.js', '**/*.mjs', '**/*.cjs'],
    extends: [tseslint.configs.disableTypeChecked],
    languageOptions: { globals: { process: 'readonly', console: 'readonly', URL: 'readonly' } },
  },
);
