// Property tests are reproducible: every fast-check run uses one fixed seed unless a test sets its own.
import fc from 'fast-check';

fc.configureGlobal({ seed: 20261201 });
