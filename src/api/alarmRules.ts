import type { BoxAlarmRuleDto, BoxAlarmRulesDto, RuleOverrideBody } from '@shared/schemas/alarms';
import type { AlarmRuleId } from '@shared/alarms/types';
import { http } from './http';

/** A box's alarm rules: defaults with their source, the box's overrides, the values in force. */
export const alarmRulesApi = {
  list: (boxId: number) => http.get<BoxAlarmRulesDto>(`/boxes/${boxId}/alarm-rules`),
  set: (boxId: number, ruleId: AlarmRuleId, body: RuleOverrideBody) => http.put<BoxAlarmRuleDto>(`/boxes/${boxId}/alarm-rules/${ruleId}`, body),
  reset: (boxId: number, ruleId: AlarmRuleId) => http.del(`/boxes/${boxId}/alarm-rules/${ruleId}`),
};
