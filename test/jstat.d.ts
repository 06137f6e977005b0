/** The parts of jstat (an independent statistics library, npm `jstat`) the tests check against. */
declare module 'jstat' {
  const jstat: {
    jStat: {
      studentt: { inv(p: number, dof: number): number; cdf(x: number, dof: number): number };
    };
  };
  export default jstat;
}
