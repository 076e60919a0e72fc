// Shapes the soak session's parts share.
import type { SoakReadingIn } from '$lib/soak/verdict';

export interface StoredReadingLike extends SoakReadingIn {
	bootId: string | null;
}
