/** The version of the language server, the CLI and the generated files' headers (keep equal to package.json's). */
export const VERSION = "0.1.0";
