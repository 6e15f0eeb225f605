#!/usr/bin/env node
// Thin launcher for the bundled command line (built by `npm run build`, run by `prepare` on `npm ci`).
"use strict";
require("../dist/cli.js").main(process.argv.slice(2)).then((code) => { process.exitCode = code; });
