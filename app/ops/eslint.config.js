// ESLint for the whole repository: JavaScript and TypeScript recommendations, React hooks rules
// and the JSX accessibility rules. Run by `npm run lint` (the first step of `npm test`).
// Prettier formats; nothing here concerns layout.
import js from "@eslint/js";
import jsxA11y from "eslint-plugin-jsx-a11y";
import reactHooks from "eslint-plugin-react-hooks";
import globals from "globals";
import tseslint from "typescript-eslint";

export default tseslint.config(
  { ignores: ["build/**", ".react-router/**", ".tmp/**", ".data/**", "node_modules/**", "drizzle/**", "public/**"] },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  {
    files: ["**/*.{ts,tsx,js,mjs}"],
    languageOptions: { globals: { ...globals.node, ...globals.browser } },
    rules: {
      // A leading underscore marks a value left unused on purpose (rest siblings, tuple slots).
      "@typescript-eslint/no-unused-vars": [
        "error",
        { argsIgnorePattern: "^_", varsIgnorePattern: "^_", destructuredArrayIgnorePattern: "^_", ignoreRestSiblings: true },
      ],
    },
  },
  {
    files: ["**/*.tsx"],
    plugins: { "react-hooks": reactHooks },
    rules: {
      ...reactHooks.configs.recommended.rules,
      // TanStack Table's hook returns functions that change identity by design; this rule only
      // concerns the React Compiler, which the project does not use.
      "react-hooks/incompatible-library": "off",
    },
  },
  {
    files: ["**/*.tsx"],
    ...jsxA11y.flatConfigs.recommended,
  },
);
