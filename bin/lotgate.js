#!/usr/bin/env node
console.log("hi", process.argv.slice(2));
