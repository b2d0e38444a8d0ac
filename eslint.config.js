// ESLint for Shotbook (issue 13): typescript-eslint's recommended rules without type information
// (fast enough for every `npm test`), React's hooks rules, and Prettier owning the layout.
import js from "@eslint/js";
import reactHooks from "eslint-plugin-react-hooks";
import globals from "globals";
import tseslint from "typescript-eslint";

export default tseslint.config(
  { ignores: ["build/", "build-*/", ".react-router/", "node_modules/", "data/", "drizzle/", "public/", "tests/.tmp/", ".cache/", "test-results/"] },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  {
    files: ["**/*.{ts,tsx,js}"],
    languageOptions: {
      ecmaVersion: 2023,
      sourceType: "module",
      globals: { ...globals.browser, ...globals.node, ...globals.serviceworker },
    },
    rules: {
      // `_name` marks a parameter kept for the signature (an API shape, a callback's position)
      "@typescript-eslint/no-unused-vars": ["error", { argsIgnorePattern: "^_", varsIgnorePattern: "^_", caughtErrors: "none", ignoreRestSiblings: true }],
      // `catch {}` where failing is the intended outcome (storage full, a closed stream) is common here; an empty function too
      "no-empty": ["error", { allowEmptyCatch: true }],
      // control characters are matched on purpose (labels refuse them, issue 11)
      "no-control-regex": "off",
    },
    linterOptions: { reportUnusedDisableDirectives: "error" },
  },
  {
    // React lives in app/ only; the tests' `useServerEnv` helpers are not hooks
    files: ["app/**/*.{ts,tsx}"],
    plugins: { "react-hooks": reactHooks },
    rules: {
      "react-hooks/rules-of-hooks": "error",
      "react-hooks/exhaustive-deps": "error",
    },
  },
);
