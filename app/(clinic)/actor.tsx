'use client';
// Who is signed in, for client components that show or hide actions. The server checks every action again.
import { createContext, useContext } from 'react';
import type { StaffRole } from '@/db/schema';

export interface ClientActor {
  userId: string;
  role: StaffRole;
  displayName: string;
  /** Veterinarians: on duty, every open critical result reaches them live. */
  onDuty: boolean;
}

const ActorContext = createContext<ClientActor | null>(null);

export function ActorProvider({ actor, children }: { actor: ClientActor; children: React.ReactNode }) {
  return <ActorContext.Provider value={actor}>{children}</ActorContext.Provider>;
}

export function useActor(): ClientActor {
  const actor = useContext(ActorContext);
  if (!actor) throw new Error('useActor outside ActorProvider');
  return actor;
}
