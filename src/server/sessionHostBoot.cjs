// Entry of a session host worker when lossdial runs from its TypeScript sources. In Node 20 a
// worker's ES module imports do not see the `--import tsx` hooks, but its require() does (the
// same route piscina takes for the study workers), so the host is required from here.
require('./sessionHost.ts');
