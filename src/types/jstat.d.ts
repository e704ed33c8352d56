// Minimal declarations for the parts of jStat that tallyfit uses.
declare module "jstat" {
  interface Dist2 { cdf(x: number, a: number, b: number): number; inv(p: number, a: number, b: number): number }
  interface Dist1 { cdf(x: number, a: number): number; inv(p: number, a: number): number }
  interface JStat { normal: Dist2; chisquare: Dist1; studentt: Dist1; centralF: Dist2 }
  const pkg: { jStat: JStat };
  export default pkg;
}
