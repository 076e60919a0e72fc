import { describe, expect, it } from 'vitest';
import { keyPart, modelKeyOf, modelKeyString, notebookPath } from './model-key';

describe('model key', () => {
	it('ignores case, spaces and punctuation', () => {
		expect(modelKeyString('Pellowmere  ', 'sa-150')).toBe('pellowmere/sa150');
		expect(modelKeyString('PELLOWMERE', 'SA150')).toBe('pellowmere/sa150');
		expect(modelKeyString(' pellow-mere ', 'S.A. 1/50')).toBe('pellowmere/sa150');
	});

	it('drops accents and folds compatibility forms (full-width, ligatures)', () => {
		expect(keyPart('Pellowmère')).toBe('pellowmere');
		// U+FF33 U+FF21 FULLWIDTH S A, U+FF11 U+FF15 U+FF10 FULLWIDTH 1 5 0
		expect(keyPart('ＳＡ－１５０')).toBe('sa150');
		expect(keyPart('ﬁdelity')).toBe('fidelity');
	});

	it('keeps digits significant: SA-150 and SA-1500 are different models', () => {
		expect(modelKeyString('Pellowmere', 'SA-150')).not.toBe(modelKeyString('Pellowmere', 'SA-1500'));
		expect(modelKeyString('Corvane', 'CR-7400')).not.toBe(modelKeyString('Corvane', 'CR-5200'));
	});

	it('keeps make and model apart: the same letters split differently are different keys', () => {
		expect(modelKeyString('Ab', 'C1')).not.toBe(modelKeyString('A', 'BC1'));
	});

	it('is null when the make or the model has no letter or digit', () => {
		expect(modelKeyOf('Corvane', ' - ')).toBeNull();
		expect(modelKeyOf('', 'CR-7400')).toBeNull();
		expect(notebookPath('Corvane', '')).toBeNull();
	});

	it('makes the notebook path from the keys', () => {
		expect(notebookPath('Pellowmere', 'SA-150')).toBe('/models/pellowmere/sa150');
		expect(notebookPath('Marrowby', 'MB-40 headphone amplifier')).toBe(
			'/models/marrowby/mb40headphoneamplifier'
		);
	});

	it('keeps letters of other scripts', () => {
		expect(keyPart('Звук-5')).toBe('звук5');
	});
});
