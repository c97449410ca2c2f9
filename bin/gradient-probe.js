#!/usr/bin/env node
// Entry of the `gradient-probe` command: the built CLI lives in dist/.
require('../dist/cli.js');
