#!/usr/bin/env node
// Package bin: runs the TypeScript CLI through tsx's loader, so a checkout needs no build step.
import './register-tsx.mjs';

await import('./main.ts');
