/* stage_params: the one input boundary between the scenario (the parameter
 * table of include/steamloft/scenario.h, already validated and in SI units)
 * and the parameter structs of the physics stages.  Only this module and the
 * commands read scenario keys; entry, partition, plume and strat know no key
 * IDs and include no scenario header (tests/cli/test_layers.sh checks). */
#include "steamloft/stage_params.h"
#include "steamloft/units.h"

#include <math.h>
#include <string.h>

void sl_entry_params_from_scenario(sl_entry_params *p, const sl_scenario *sc)
{
    memset(p, 0, sizeof *p);
    p->diameter_m = sl_scenario_value(sc, SL_P_IMPACTOR_DIAMETER);
    p->density_kg_m3 = sl_scenario_value(sc, SL_P_IMPACTOR_DENSITY);
    p->speed_m_s = sl_scenario_value(sc, SL_P_IMPACTOR_SPEED);
    p->angle_rad = sl_scenario_value(sc, SL_P_IMPACTOR_ANGLE);
    p->strength_Pa = sl_scenario_value(sc, SL_P_IMPACTOR_STRENGTH);
    p->start_altitude_m = sl_scenario_value(sc, SL_P_ENTRY_START_ALTITUDE);
    p->drag_coefficient = sl_scenario_value(sc, SL_P_ENTRY_DRAG);
    p->heat_transfer_coefficient = sl_scenario_value(sc, SL_P_ENTRY_HEAT_TRANSFER);
    p->heat_of_ablation_J_kg = sl_scenario_value(sc, SL_P_ENTRY_ABLATION_HEAT);
    p->spread_coefficient = sl_scenario_value(sc, SL_P_ENTRY_SPREAD);
    p->burst_spread_factor = sl_scenario_value(sc, SL_P_ENTRY_BURST_FACTOR);
    p->breakup_model = (int)sl_scenario_value(sc, SL_P_ENTRY_BREAKUP_MODEL);
    p->fragmenting_strength_Pa = sl_scenario_value(sc, SL_P_ENTRY_FRAGMENTING_STRENGTH);
    p->fragment_count = (int)lround(sl_scenario_value(sc, SL_P_ENTRY_FRAGMENT_COUNT));
    p->fragment_generations = (int)lround(sl_scenario_value(sc, SL_P_ENTRY_FRAGMENT_GENERATIONS));
    p->cloud_fraction = sl_scenario_value(sc, SL_P_ENTRY_CLOUD_FRACTION);
    p->weibull_exponent = sl_scenario_value(sc, SL_P_ENTRY_WEIBULL);
    p->separation_coefficient = sl_scenario_value(sc, SL_P_ENTRY_SEPARATION);
    p->radiation_temperature_K = sl_scenario_value(sc, SL_P_ENTRY_RADIATION_TEMPERATURE);
    p->band_width_m = sl_scenario_value(sc, SL_P_ENTRY_BAND);
    p->relative_tolerance = sl_scenario_value(sc, SL_P_ENTRY_RTOL);
    p->imposed_burst_altitude_m = sl_scenario_value(sc, SL_P_AIRBURST_ALTITUDE);
    p->imposed_burst_fraction = sl_scenario_value(sc, SL_P_AIRBURST_FRACTION);
    p->flat_no_gravity = 0;
}

void sl_entry_params_breakup_defaults(sl_entry_params *p)
{
    /* These keys are in SI units already (Pa, K, dimensionless, counts; the
     * choice's first word, auto, is index 0). */
    p->breakup_model = (int)sl_scenario_params[SL_P_ENTRY_BREAKUP_MODEL].default_value;
    p->fragmenting_strength_Pa = sl_scenario_params[SL_P_ENTRY_FRAGMENTING_STRENGTH].default_value;
    p->fragment_count = (int)sl_scenario_params[SL_P_ENTRY_FRAGMENT_COUNT].default_value;
    p->fragment_generations = (int)sl_scenario_params[SL_P_ENTRY_FRAGMENT_GENERATIONS].default_value;
    p->cloud_fraction = sl_scenario_params[SL_P_ENTRY_CLOUD_FRACTION].default_value;
    p->weibull_exponent = sl_scenario_params[SL_P_ENTRY_WEIBULL].default_value;
    p->separation_coefficient = sl_scenario_params[SL_P_ENTRY_SEPARATION].default_value;
    p->radiation_temperature_K = sl_scenario_params[SL_P_ENTRY_RADIATION_TEMPERATURE].default_value;
}

void sl_partition_input_from_scenario(sl_partition_input *in, const sl_scenario *sc)
{
    memset(in, 0, sizeof *in);
    in->kind = sc->kind;
    in->sea_temperature_K = sl_scenario_value(sc, SL_P_SITE_SST);
    in->ocean_depth_m = sl_scenario_value(sc, SL_P_SITE_OCEAN_DEPTH);
    if (sc->kind == SL_SCENARIO_EXPLOSION) {
        in->explosion_energy_J = sl_scenario_value(sc, SL_P_EXPLOSION_ENERGY);
        in->explosion_altitude_m = sl_scenario_value(sc, SL_P_EXPLOSION_ALTITUDE);
        in->explosion_heat_fraction = sl_scenario_value(sc, SL_P_EXPLOSION_HEAT);
        /* A burst touching the sea vaporises water with the impact's budget physics. */
        in->vapor_energy_fraction = sl_scenario_has(sc, SL_P_PARTITION_VAPOR_FRACTION)
                                        ? sl_scenario_value(sc, SL_P_PARTITION_VAPOR_FRACTION)
                                        : sl_scenario_params[SL_P_PARTITION_VAPOR_FRACTION].default_value;
        in->plume_heat_fraction = sl_scenario_has(sc, SL_P_PARTITION_HEAT_FRACTION)
                                      ? sl_scenario_value(sc, SL_P_PARTITION_HEAT_FRACTION)
                                      : sl_scenario_params[SL_P_PARTITION_HEAT_FRACTION].default_value;
        if (!sl_scenario_has(sc, SL_P_SITE_OCEAN_DEPTH) || !isfinite(in->ocean_depth_m))
            in->ocean_depth_m = 0.0; /* no sea given: no sea water */
        return;
    }
    in->method = (sl_partition_method)(int)sl_scenario_value(sc, SL_P_PARTITION_METHOD);
    in->vapor_energy_fraction = sl_scenario_value(sc, SL_P_PARTITION_VAPOR_FRACTION);
    in->plume_heat_fraction = sl_scenario_value(sc, SL_P_PARTITION_HEAT_FRACTION);
    in->target_heat_fraction = sl_scenario_value(sc, SL_P_PARTITION_TARGET_HEAT);
    in->air_heat_fraction = sl_scenario_value(sc, SL_P_PARTITION_AIRBURST_HEAT);
    in->impactor_material = (int)sl_scenario_value(sc, SL_P_PARTITION_IMPACTOR_HUGONIOT);
    in->impactor_density_kg_m3 = sl_scenario_value(sc, SL_P_IMPACTOR_DENSITY);
    in->impactor_water_fraction = sl_scenario_value(sc, SL_P_IMPACTOR_WATER);
}

void sl_plume_params_from_scenario(sl_plume_params *par, const sl_scenario *sc)
{
    sl_plume_params_default(par);
    par->entrainment_alpha = sl_scenario_value(sc, SL_P_PLUME_ALPHA);
    par->added_mass_k = sl_scenario_value(sc, SL_P_PLUME_ADDED_MASS);
    par->fallout_speed_m_s = sl_scenario_value(sc, SL_P_PLUME_FALLOUT_SPEED);
    par->ice_sediment_fraction = sl_scenario_value(sc, SL_P_PLUME_ICE_SEDIMENT);
    par->rtol = sl_scenario_value(sc, SL_P_PLUME_RTOL);
}

void sl_strat_params_from_scenario(sl_strat_params *p, const sl_scenario *sc)
{
    sl_strat_params_default(p);
    p->span_s = sl_scenario_value(sc, SL_P_STRAT_SPAN);
    p->step_s = sl_scenario_value(sc, SL_P_STRAT_STEP);
    p->deep_branch_fraction = sl_scenario_value(sc, SL_P_STRAT_DEEP_BRANCH);
    p->inmixing_time_s = sl_scenario_value(sc, SL_P_STRAT_INMIXING);
    p->lms_residence_s = sl_scenario_value(sc, SL_P_STRAT_LMS_RESIDENCE);
    p->antarctic_vortex_fraction = sl_scenario_value(sc, SL_P_STRAT_VORTEX);
    double month = sl_scenario_value(sc, SL_P_SITE_MONTH);
    p->start_month = isfinite(month) && month >= 1.0 && month <= 12.0 ? (int)month : 0;
}

void sl_emission_params_from_scenario(sl_emission_params *p, const sl_scenario *sc)
{
    sl_param_origin od = sc->origin[SL_P_SITE_DATE];
    p->event_time_s = od == SL_ORIGIN_FILE || od == SL_ORIGIN_SET ? sc->value_si[SL_P_SITE_DATE] : NAN;
    double month = sl_scenario_value(sc, SL_P_SITE_MONTH);
    p->month = isfinite(month) && month >= 1.0 && month <= 12.0 ? (int)month : 0;
    p->duration_s = sl_scenario_value(sc, SL_P_EMISSION_DURATION);
    p->radius_m = sl_scenario_value(sc, SL_P_EMISSION_RADIUS); /* NaN: from the cloud */
}
