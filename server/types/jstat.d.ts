// jstat ships no type declarations; these cover the functions Heft calls.
declare module 'jstat' {
  interface ContinuousDistribution {
    cdf(x: number, ...params: number[]): number;
    inv(p: number, ...params: number[]): number;
    pdf(x: number, ...params: number[]): number;
  }
  const jStat: {
    studentt: ContinuousDistribution;
    normal: ContinuousDistribution;
    chisquare: ContinuousDistribution;
    centralF: ContinuousDistribution;
    /** Noncentral t: cdf(x, dof, ncp). */
    noncentralt: { cdf(x: number, dof: number, ncp: number): number };
    gammaln(x: number): number;
    gammafn(x: number): number;
    /** The regularised incomplete beta function I_x(a, b). */
    ibeta(x: number, a: number, b: number): number;
  };
  export default jStat;
}
