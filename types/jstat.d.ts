declare module 'jstat' {
  const jstatModule: { jStat: any };
  export default jstatModule;
}
