#!/bin/bash
# campaign over the pipeline after solve: threads 1 vs 2 bytes, emit float/double/q15 with the certificate, gcc -Werror, the self-test program
cli=/work/wt/eig/dist/src/cli/main.js
out=/tmp/s28/femit; mkdir -p $out
for seed in $(seq $1 $2); do
  d=$out/$seed; rm -rf $d; mkdir -p $d
  npx tsx tmp/gen.ts $seed > $d/p.json 2> $d/kind || continue
  timeout 60 node $cli solve $d/p.json -o $d/t1.json --threads 1 --time-limit 20 > $d/s1.log 2>&1 || { echo "$seed $(cat $d/kind): solve exit $?"; continue; }
  grep -q "complete: yes" $d/s1.log || { echo "$seed $(cat $d/kind): incomplete, skipped"; continue; }
  n=$(node -e "console.log(require('$d/t1.json').regions.length)")
  timeout 120 node $cli solve $d/p.json -o $d/t2.json --threads 2 > $d/s2.log 2>&1
  cmp -s $d/t1.json $d/t2.json && same=same || same=DIFFERENT
  res=""
  for prec in float double q15; do
    timeout 300 node $cli emit $d/t1.json --precision $prec --certify --selftest 500 -o $d/$prec -q > $d/e-$prec.log 2>&1; ec=$?
    c=$(ls $d/$prec/*_selftest.c 2>/dev/null | head -1)
    if [ -n "$c" ]; then
      gcc -std=c99 -O2 -Wall -Wextra -Wpedantic -Werror -o $d/$prec/st $d/$prec/*.c -lm > $d/gcc-$prec.log 2>&1 && gc=ok || gc=GCCFAIL
      if [ $gc = ok ]; then (cd $d/$prec && timeout 60 ./st > st.log 2>&1) && st=ok || st=STFAIL; else st=-; fi
    else gc=nofile; st=-; fi
    res="$res $prec:emit$ec,$gc,$st"
  done
  echo "$seed $(cat $d/kind): $n regions, threads $same,$res"
done
