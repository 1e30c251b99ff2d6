// Entry of a study worker when lossdial runs from its TypeScript sources. The sources are loaded
// as ES modules through tsx's loader, registered here in the worker itself: in Node 20 a worker
// does not see the loader hooks of `--import tsx`, and loading the sources through require()
// instead turns every imported binding into a getter call, which cost the workers about a third
// of their speed on the hot paths.
import { register } from 'tsx/esm/api';

register();
const { default: evaluateBatch } = await import('./worker.ts');
export default evaluateBatch;
