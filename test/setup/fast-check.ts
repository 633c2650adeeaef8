/**
 * Property tests draw fresh random cases on every run; with FC_SEED set (CI sets it) they replay
 * one fixed sequence, so a CI result can be reproduced exactly. A failure prints its seed either way.
 */
import fc from 'fast-check';

const seed = process.env.FC_SEED;
if (seed !== undefined && seed !== '') fc.configureGlobal({ seed: Number(seed) });
