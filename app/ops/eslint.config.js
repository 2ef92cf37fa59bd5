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
        {
          argsIgnorePattern: "^_",
          varsIgnorePattern: "^_",
          destructuredArrayIgnorePattern: "^_",
          ignoreRestSiblings: true,
        },
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
    rules: {
      ...jsxA11y.flatConfigs.recommended.rules,
      // Our labels wrap their control with the text a level or two down (title and hint spans).
      "jsx-a11y/label-has-associated-control": ["error", { depth: 4 }],
    },
  },
  {
    // Layering: route modules call into app/models (domain), app/utils (infrastructure) and
    // app/components; nothing outside app/routes imports a route module.
    files: ["app/components/**", "app/models/**", "app/utils/**", "app/lib/**", "app/ops/**", "seeds/**"],
    rules: {
      "no-restricted-imports": [
        "error",
        {
          patterns: [
            {
              group: ["~/routes/*", "**/routes/*"],
              message: "Only the router imports route modules; move shared code to app/models or app/components.",
            },
          ],
        },
      ],
    },
  },
  {
    // Domain logic lives in app/models: a route area never imports another area's server module.
    files: ["app/routes/**"],
    rules: {
      "no-restricted-imports": [
        "error",
        {
          patterns: [
            {
              group: ["~/routes/**/*.server", "../*/*.server"],
              message: "Server logic shared between areas belongs in app/models.",
            },
            {
              // Routes guard, parse, call a model and render: queries and transactions live in app/models.
              group: ["~/utils/db.server", "drizzle-orm", "drizzle-orm/*"],
              message: "Query the database from app/models; a route calls the model.",
            },
          ],
        },
      ],
    },
  },
);
