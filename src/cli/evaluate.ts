import type { Command } from 'commander';

// Placeholder until the command lands; replaced by its own implementation.
export function register(_program: Command): void {}
