import { redirect } from 'next/navigation';
import { currentActor } from '@/lib/auth/current';
import { clinicCount } from '@/lib/staff';

export const dynamic = 'force-dynamic';

export default async function Home() {
  if ((await clinicCount()) === 0) redirect('/setup');
  redirect((await currentActor()) ? '/intake' : '/sign-in');
}
