import { useId } from 'react';
import type { TeamWithRole } from '../../../../server/contracts';

/**
 * The team the studio is showing. A native select keeps it keyboard- and screen-reader-friendly;
 * with a single team there is nothing to switch, so only the name shows.
 */
export function TeamSwitcher({ teams, currentTeamId, onSelect }: { teams: TeamWithRole[]; currentTeamId: number; onSelect: (teamId: number) => void }) {
  const id = useId();
  const current = teams.find((team) => team.id === currentTeamId);
  if (teams.length <= 1) {
    return (
      <p className="flex min-w-0 items-baseline gap-2 text-sm">
        <span className="text-ink-300">Team</span>
        <span className="truncate font-medium text-white">{current?.name}</span>
      </p>
    );
  }
  return (
    <div className="flex min-w-0 items-center gap-2 text-sm">
      <label htmlFor={id} className="text-ink-300">
        Team
      </label>
      <select
        id={id}
        value={currentTeamId}
        onChange={(event) => onSelect(Number(event.target.value))}
        className="h-8 max-w-[16rem] truncate rounded-md border border-ink-700 bg-ink-800 px-2 font-medium text-white hover:border-ink-500"
      >
        {teams.map((team) => (
          <option key={team.id} value={team.id}>
            {team.name}
          </option>
        ))}
      </select>
    </div>
  );
}
