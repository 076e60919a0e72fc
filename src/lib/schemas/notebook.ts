// The model notebook: query strings and bodies its pages and API accept, and the shapes they
// answer with. No server imports (the pages and the intake form use these).
import { z } from 'zod';
import type { JobStatus } from './enums';
import type { JobFileView } from './job-files';
import type { TypicalGroup } from '../notebook/typical';

/** An empty query-string value means "not given". */
const blank = (v: unknown) => (v === '' ? undefined : v);

export const MODELS_PAGE_SIZE_MAX = 100;

/** GET /api/models and /models: `q` matches make and model however typed (case, spaces, punctuation). */
export const modelSearchSchema = z.strictObject({
	q: z.preprocess(blank, z.string().trim().max(100, 'Search text is at most 100 characters').optional()),
	page: z.preprocess(
		blank,
		z.coerce.number('page is a whole number from 1').int().min(1).max(100_000).default(1)
	),
	pageSize: z.preprocess(
		blank,
		z.coerce
			.number('pageSize is a whole number')
			.int()
			.min(1, 'pageSize is at least 1')
			.max(MODELS_PAGE_SIZE_MAX, `pageSize is at most ${MODELS_PAGE_SIZE_MAX}`)
			.default(25)
	)
});
export type ModelSearch = z.infer<typeof modelSearchSchema>;

/** GET /api/models/lookup?make=&model= (intake's suggestion). */
export const modelLookupSchema = z.strictObject({
	make: z
		.string('make is required')
		.trim()
		.min(1, 'make is required')
		.max(100, 'make is at most 100 characters'),
	model: z
		.string('model is required')
		.trim()
		.min(1, 'model is required')
		.max(100, 'model is at most 100 characters')
});

export const MODEL_NOTES_MAX_CHARS = 20_000;

/** Saving a model's adjustment notes: the whole text and the version it was edited from (0 for the first). */
export const modelNotesSaveSchema = z.strictObject({
	version: z.coerce.number('version is a whole number').int().min(0, 'version is 0 or more'),
	text: z
		.string('text is required')
		.trim()
		.min(1, 'Write something before saving')
		.max(MODEL_NOTES_MAX_CHARS, `Notes are at most ${MODEL_NOTES_MAX_CHARS} characters`)
});
export type ModelNotesSave = z.infer<typeof modelNotesSaveSchema>;

// ── answers ─────────────────────────────────────────────────────────────────

export interface ModelListItem {
	/** `make/model` key. */
	key: string;
	make: string;
	model: string;
	path: string;
	jobs: number;
	lastSeenAt: string;
}

export interface ModelList {
	items: ModelListItem[];
	total: number;
	page: number;
	pageSize: number;
}

export interface ModelLookup {
	key: string;
	make: string;
	model: string;
	path: string;
	jobs: number;
	lastComplaint: string | null;
	lastSeenAt: string | null;
}

export interface NotebookJob {
	id: number;
	make: string;
	model: string;
	serial: string | null;
	complaint: string;
	status: JobStatus;
	/** The first work-log entry (what was found), shortened. */
	finding: string | null;
	createdAt: string;
	updatedAt: string;
}

export interface DesignatorRow {
	/** Designators replaced together on the same units with the same description ("C401, C402"). */
	designators: string[];
	description: string;
	values: string[];
	/** Units (jobs) with these fitted. */
	units: number;
	/** Units seen on this model (the "of"). */
	ofUnits: number;
	jobIds: number[];
}

export interface NoteVersionView {
	version: number;
	text: string;
	savedAt: string;
	savedByName: string | null;
}

export interface ModelNotesView {
	text: string;
	version: number;
	updatedAt: string;
	updatedByName: string | null;
}

export interface Notebook {
	key: string;
	make: string;
	model: string;
	path: string;
	jobs: NotebookJob[];
	/** Jobs on the model in all (the list is bounded). */
	jobCount: number;
	parts: DesignatorRow[];
	notes: ModelNotesView | null;
	noteHistory: NoteVersionView[];
	documents: JobFileView[];
	typical: TypicalGroup[];
}

/** One line of "where this unit sits" for a snapshot. */
export interface PlacementLine {
	metric: string;
	channel: number;
	value: number;
	text: string;
	where: 'below' | 'within' | 'above' | null;
}

export interface SnapshotPlacement {
	path: string;
	make: string;
	model: string;
	conditionsLabel: string;
	/** Units of this model (this one left out) with a passing after snapshot under these conditions. */
	units: number;
	lines: PlacementLine[];
}
