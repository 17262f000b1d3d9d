//! The toy panel's six indicator groups (every name invented) and which indicators fall as
//! their group's factor rises.

pub(crate) struct Group {
    pub(crate) key: &'static str,
    pub(crate) label: &'static str,
    pub(crate) stems: [(&'static str, &'static str, &'static str); 15],
}

pub(crate) const GROUPS: [Group; 6] = [
    Group {
        key: "income",
        label: "Household income and work",
        stems: [
            (
                "inc_median_income",
                "Median household income",
                "thousand credits",
            ),
            (
                "inc_low_income_share",
                "Households below the low-income line",
                "percent",
            ),
            ("inc_unemployment", "Unemployment rate", "percent"),
            (
                "inc_benefit_claims",
                "Households claiming income support",
                "percent",
            ),
            ("inc_wage_growth", "Annual wage growth", "percent"),
            ("inc_savings_rate", "Households with savings", "percent"),
            (
                "inc_debt_arrears",
                "Households in arrears on bills",
                "percent",
            ),
            (
                "inc_part_time_share",
                "Workers in part-time jobs",
                "percent",
            ),
            ("inc_self_employed", "Self-employed workers", "percent"),
            (
                "inc_food_aid_visits",
                "Food aid visits per 1000 residents",
                "per 1000",
            ),
            (
                "inc_child_poverty",
                "Children in low-income households",
                "percent",
            ),
            (
                "inc_pension_only",
                "Households living on a pension only",
                "percent",
            ),
            ("inc_gini", "Income Gini index", "index 0-100"),
            (
                "inc_top_decile_share",
                "Income share of the top decile",
                "percent",
            ),
            (
                "inc_job_vacancies",
                "Job vacancies per 1000 residents",
                "per 1000",
            ),
        ],
    },
    Group {
        key: "housing",
        label: "Housing stock",
        stems: [
            (
                "hou_pre1950_share",
                "Dwellings built before 1950",
                "percent",
            ),
            (
                "hou_poor_insulation",
                "Dwellings with poor insulation",
                "percent",
            ),
            (
                "hou_single_glazing",
                "Dwellings with single glazing",
                "percent",
            ),
            (
                "hou_private_rent",
                "Households renting privately",
                "percent",
            ),
            ("hou_social_rent", "Households in social housing", "percent"),
            ("hou_overcrowding", "Overcrowded dwellings", "percent"),
            (
                "hou_damp_reports",
                "Damp complaints per 1000 dwellings",
                "per 1000",
            ),
            ("hou_detached_share", "Detached houses", "percent"),
            (
                "hou_floor_area",
                "Mean floor area per dwelling",
                "square metres",
            ),
            ("hou_vacancy", "Vacant dwellings", "percent"),
            (
                "hou_renovation_rate",
                "Dwellings renovated in the last 5 years",
                "percent",
            ),
            (
                "hou_efficiency_score",
                "Mean energy-efficiency score",
                "index 0-100",
            ),
            (
                "hou_solid_fuel",
                "Dwellings heated with solid fuel",
                "percent",
            ),
            ("hou_heat_pump", "Dwellings with a heat pump", "percent"),
            ("hou_rent_burden", "Rent as a share of income", "percent"),
        ],
    },
    Group {
        key: "climate",
        label: "Climate and heating demand",
        stems: [
            (
                "cli_heating_degree_days",
                "Heating degree days per year",
                "degree days",
            ),
            (
                "cli_winter_mean_temp",
                "Mean winter temperature",
                "degrees C",
            ),
            ("cli_frost_days", "Frost days per year", "days"),
            ("cli_altitude", "Mean altitude", "metres"),
            ("cli_wind_exposure", "Wind exposure index", "index 0-100"),
            ("cli_rain_days", "Rain days per year", "days"),
            ("cli_snow_days", "Snow days per year", "days"),
            ("cli_sunshine_hours", "Winter sunshine hours", "hours"),
            ("cli_cold_spells", "Cold spells per winter", "count"),
            ("cli_humidity", "Mean winter humidity", "percent"),
            ("cli_summer_heat_days", "Days above 30 degrees C", "days"),
            (
                "cli_coastal_share",
                "Population living near the coast",
                "percent",
            ),
            ("cli_heating_season", "Length of the heating season", "days"),
            (
                "cli_storm_outages",
                "Storm-related power outages",
                "per year",
            ),
            ("cli_night_frost", "Nights below -5 degrees C", "nights"),
        ],
    },
    Group {
        key: "prices",
        label: "Energy prices and supply",
        stems: [
            (
                "prc_tariff_index",
                "Household energy tariff index",
                "index, mean 100",
            ),
            ("prc_gas_price", "Gas price per unit", "credits"),
            ("prc_power_price", "Power price per unit", "credits"),
            (
                "prc_prepay_meters",
                "Households on prepayment meters",
                "percent",
            ),
            ("prc_off_grid_gas", "Dwellings off the gas grid", "percent"),
            ("prc_oil_heating", "Dwellings heated with oil", "percent"),
            ("prc_supplier_count", "Active energy suppliers", "count"),
            (
                "prc_switching_rate",
                "Households that switched supplier",
                "percent",
            ),
            ("prc_standing_charge", "Daily standing charge", "credits"),
            (
                "prc_price_change",
                "Tariff change since the previous wave",
                "percent",
            ),
            (
                "prc_disconnections",
                "Disconnections per 1000 households",
                "per 1000",
            ),
            (
                "prc_smart_meters",
                "Households with a smart meter",
                "percent",
            ),
            (
                "prc_green_tariff",
                "Households on a green tariff",
                "percent",
            ),
            ("prc_network_losses", "Network losses", "percent"),
            ("prc_fuel_duty", "Local fuel levy", "credits"),
        ],
    },
    Group {
        key: "access",
        label: "Access to services",
        stems: [
            ("acc_travel_time_gp", "Travel time to a clinic", "minutes"),
            (
                "acc_bus_frequency",
                "Buses per hour at the nearest stop",
                "per hour",
            ),
            ("acc_broadband", "Households with fast broadband", "percent"),
            ("acc_car_ownership", "Households without a car", "percent"),
            (
                "acc_advice_centres",
                "Advice centres per 100k residents",
                "per 100k",
            ),
            ("acc_pop_density", "Population density", "per square km"),
            ("acc_shop_distance", "Distance to a food shop", "km"),
            ("acc_school_distance", "Distance to a primary school", "km"),
            (
                "acc_bank_branches",
                "Bank branches per 100k residents",
                "per 100k",
            ),
            (
                "acc_post_offices",
                "Post offices per 100k residents",
                "per 100k",
            ),
            ("acc_road_quality", "Road quality index", "index 0-100"),
            ("acc_commute_time", "Mean commute time", "minutes"),
            (
                "acc_library_visits",
                "Library visits per resident",
                "per year",
            ),
            (
                "acc_ev_chargers",
                "Public chargers per 10k residents",
                "per 10k",
            ),
            (
                "acc_digital_services",
                "Residents using online public services",
                "percent",
            ),
        ],
    },
    Group {
        key: "people",
        label: "Population structure",
        stems: [
            ("ppl_over_75", "Residents aged 75 and over", "percent"),
            ("ppl_under_5", "Residents aged under 5", "percent"),
            ("ppl_single_person", "Single-person households", "percent"),
            ("ppl_lone_parent", "Lone-parent households", "percent"),
            (
                "ppl_disability",
                "Residents with a long-term disability",
                "percent",
            ),
            ("ppl_migration_in", "Inward migration rate", "percent"),
            ("ppl_household_size", "Mean household size", "persons"),
            ("ppl_median_age", "Median age", "years"),
            ("ppl_birth_rate", "Births per 1000 residents", "per 1000"),
            ("ppl_students", "Residents in full-time study", "percent"),
            ("ppl_carers", "Residents providing unpaid care", "percent"),
            (
                "ppl_language_support",
                "Households needing language support",
                "percent",
            ),
            ("ppl_population", "Resident population", "thousand"),
            (
                "ppl_growth",
                "Population growth since the previous wave",
                "percent",
            ),
            (
                "ppl_volunteering",
                "Residents volunteering monthly",
                "percent",
            ),
        ],
    },
];

/// Indicators that fall as their group's factor rises (the factors point towards
/// hardship: poverty, old housing, cold, high prices, remoteness, ageing).
const FALLING: &[&str] = &[
    "inc_median_income",
    "inc_wage_growth",
    "inc_savings_rate",
    "inc_self_employed",
    "inc_top_decile_share",
    "inc_job_vacancies",
    "hou_renovation_rate",
    "hou_efficiency_score",
    "hou_heat_pump",
    "cli_winter_mean_temp",
    "cli_sunshine_hours",
    "cli_summer_heat_days",
    "cli_coastal_share",
    "prc_supplier_count",
    "prc_switching_rate",
    "acc_bus_frequency",
    "acc_broadband",
    "acc_advice_centres",
    "acc_pop_density",
    "acc_bank_branches",
    "acc_post_offices",
    "acc_road_quality",
    "acc_library_visits",
    "acc_ev_chargers",
    "acc_digital_services",
    "acc_car_ownership",
    "ppl_under_5",
    "ppl_birth_rate",
    "ppl_students",
    "ppl_growth",
    "ppl_household_size",
    "ppl_migration_in",
];

pub(crate) fn direction(key: &str) -> f64 {
    if FALLING.contains(&key) {
        -1.0
    } else {
        1.0
    }
}
