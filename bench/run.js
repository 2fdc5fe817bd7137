// `npm run bench` starts this file after the build: the compiled bench lives in dist/bench/.
import { benchMain } from '../dist/bench/run.js';

benchMain();
