// Sessions and passwords. (Foundation work fills this in; the types are the contract.)
import type { Role } from './db/schema';

export interface SessionUser {
	id: string;
	email: string;
	name: string;
	role: Role;
}

export interface SessionInfo {
	id: string;
	expiresAt: Date;
	createdAt: Date;
}
