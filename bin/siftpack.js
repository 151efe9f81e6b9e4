#!/usr/bin/env node
// Entry point of the siftpack command; the compiled CLI lives in dist/ (built by `npm install`).
import { main } from "../dist/cli/main.js";

process.exitCode = await main(process.argv.slice(2));
