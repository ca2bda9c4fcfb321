// The UMD bundle that mathjs ships beside its module entry points has no declaration of its own.
declare module 'mathjs/lib/browser/math.js' {
  const math: typeof import('mathjs');
  export default math;
}
