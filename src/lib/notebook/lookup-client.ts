// Browser side of intake's notebook suggestion: has the shop seen this make and model before?
import type { ModelLookup } from '../schemas/notebook';

/** The model's notebook summary, or null when the shop has not seen it (or the lookup failed). */
export async function lookupModel(
	make: string,
	model: string,
	signal: AbortSignal
): Promise<ModelLookup | null> {
	const qs = `make=${encodeURIComponent(make.trim())}&model=${encodeURIComponent(model.trim())}`;
	const res = await fetch(`/api/models/lookup?${qs}`, { signal, headers: { accept: 'application/json' } });
	if (!res.ok) return null;
	return ((await res.json()) as { model: ModelLookup | null }).model;
}
