// print the fuzz problem of a seed (same generator as fuzz.ts)
