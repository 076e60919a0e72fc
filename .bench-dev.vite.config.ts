// Temporary (bench helper): the project's Vite config without HMR, so edits by others do not reload the page under test.
import base from './vite.config';
export default { ...base, server: { ...(base as { server?: object }).server, hmr: false } };
