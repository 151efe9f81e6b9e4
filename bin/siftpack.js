#!/usr/bin/env node
// Entry point of the siftpack command; the compiled CLI lives in dist/ (built by `npm install`).
import { main } from "../dist/cli/main.js";

// Exit as soon as the command is done: a worker thread left behind by a failed build must not keep
// the process alive (stdout and stderr are synchronous for files and pipes on Linux, so nothing is lost).
process.exit(await main(process.argv.slice(2)));
