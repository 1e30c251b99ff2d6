// Entry of a session host worker when lossdial runs from its TypeScript sources. The sources are
// loaded as ES modules through tsx's loader, registered here in the worker itself: in Node 20 a
// worker does not see the loader hooks of `--import tsx`, and loading the sources through
// require() instead turns every imported binding into a getter call (a third slower on the
// simulation's hot paths).
import { register } from 'tsx/esm/api';

register();
await import('./sessionHost.ts');
