//! Generates the demo data set: "Ladle & Loaf", an invented recipe-sharing club whose
//! members rate recipes from 1 to 5 stars. Everything here is made up.
//!
//! Usage: `cargo run --release --example make_demo -- [OUT_DIR] [--members N] [--recipes N] [--seed S]`
//! (defaults: demo-data, 1500 members, 400 recipes, seed 2026). Writes `ratings.csv`
//! (`user,item,rating`), `items.csv` (`item,title,category,minutes`) and `cooked.csv`
//! (`user,item,count`: how many times each member cooked a recipe — the implicit-feedback
//! demo, from the same members' tastes and a second random stream, so `ratings.csv` is
//! the same as before it existed).
//!
//! The data has planted structure so a fit has something to find: every category has a
//! direction in a 6-dimensional taste space, each recipe sits near its category's direction,
//! each member has a taste vector and a personal leniency, and members mostly rate recipes
//! they are drawn to. Activity is long-tailed (log-normal), so some members and recipes have
//! fewer ratings than the default rank of 10.

use std::fmt::Write as _;
use std::path::PathBuf;

use sextant::rng::Rng;

const TASTE_DIMS: usize = 6;

struct Category {
    name: &'static str,
    adjectives: [&'static str; 5],
    ingredients: [&'static str; 10],
    dishes: [&'static str; 3],
}

const CATEGORIES: [Category; 8] = [
    Category {
        name: "breads",
        adjectives: ["Seeded", "Rustic", "Overnight", "Braided", "Crusty"],
        ingredients: [
            "Rye", "Spelt", "Oat", "Walnut", "Potato", "Pumpkin", "Barley", "Olive", "Fennel",
            "Honey",
        ],
        dishes: ["Loaf", "Rolls", "Flatbread"],
    },
    Category {
        name: "soups",
        adjectives: ["Smoky", "Creamy", "Hearty", "Clear", "Chilled"],
        ingredients: [
            "Lentil", "Leek", "Tomato", "Chestnut", "Pea", "Squash", "Bean", "Celeriac", "Nettle",
            "Onion",
        ],
        dishes: ["Soup", "Broth", "Chowder"],
    },
    Category {
        name: "curries",
        adjectives: ["Fiery", "Mild", "Coconut", "Tamarind", "Roasted"],
        ingredients: [
            "Chickpea",
            "Aubergine",
            "Spinach",
            "Cauliflower",
            "Okra",
            "Paneer",
            "Prawn",
            "Lamb",
            "Potato",
            "Mushroom",
        ],
        dishes: ["Curry", "Masala", "Stew"],
    },
    Category {
        name: "salads",
        adjectives: ["Crunchy", "Warm", "Zesty", "Herby", "Charred"],
        ingredients: [
            "Fennel", "Beetroot", "Farro", "Radish", "Cucumber", "Kale", "Orange", "Lentil",
            "Apple", "Cabbage",
        ],
        dishes: ["Salad", "Slaw", "Bowl"],
    },
    Category {
        name: "cakes",
        adjectives: ["Sticky", "Spiced", "Lemon", "Marbled", "Upside-down"],
        ingredients: [
            "Ginger",
            "Almond",
            "Carrot",
            "Plum",
            "Cardamom",
            "Rhubarb",
            "Pear",
            "Hazelnut",
            "Poppy Seed",
            "Date",
        ],
        dishes: ["Cake", "Loaf Cake", "Traybake"],
    },
    Category {
        name: "noodles",
        adjectives: ["Sesame", "Garlic", "Hand-pulled", "Cold", "Peanut"],
        ingredients: [
            "Tofu", "Greens", "Mushroom", "Egg", "Cabbage", "Chicken", "Pork", "Shrimp", "Chili",
            "Scallion",
        ],
        dishes: ["Noodles", "Stir-fry", "Noodle Soup"],
    },
    Category {
        name: "grills",
        adjectives: ["Charcoal", "Marinated", "Skewered", "Glazed", "Cedar"],
        ingredients: [
            "Halloumi",
            "Corn",
            "Mackerel",
            "Chicken",
            "Pepper",
            "Courgette",
            "Lamb",
            "Sausage",
            "Trout",
            "Pineapple",
        ],
        dishes: ["Skewers", "Platter", "Steaks"],
    },
    Category {
        name: "preserves",
        adjectives: ["Quick", "Spiced", "Small-batch", "Tart", "Smoky"],
        ingredients: [
            "Plum",
            "Onion",
            "Quince",
            "Chili",
            "Apricot",
            "Gooseberry",
            "Beetroot",
            "Lemon",
            "Tomato",
            "Damson",
        ],
        dishes: ["Jam", "Chutney", "Pickle"],
    },
];

struct Options {
    out: PathBuf,
    members: usize,
    recipes: usize,
    seed: u64,
}

fn parse_args() -> Result<Options, String> {
    let mut options = Options {
        out: PathBuf::from("demo-data"),
        members: 1500,
        recipes: 400,
        seed: 2026,
    };
    let mut args = std::env::args().skip(1);
    while let Some(arg) = args.next() {
        let mut value = |name: &str| args.next().ok_or_else(|| format!("{name} needs a value"));
        match arg.as_str() {
            "--members" => {
                options.members = value("--members")?
                    .parse()
                    .map_err(|e| format!("--members: {e}"))?;
            }
            "--recipes" => {
                options.recipes = value("--recipes")?
                    .parse()
                    .map_err(|e| format!("--recipes: {e}"))?;
            }
            "--seed" => {
                options.seed = value("--seed")?
                    .parse()
                    .map_err(|e| format!("--seed: {e}"))?;
            }
            other if !other.starts_with('-') => options.out = PathBuf::from(other),
            other => return Err(format!("unknown option '{other}'")),
        }
    }
    Ok(options)
}

fn gaussian(rng: &mut Rng, scale: f64) -> [f64; TASTE_DIMS] {
    std::array::from_fn(|_| scale * rng.normal())
}

fn dot(a: &[f64; TASTE_DIMS], b: &[f64; TASTE_DIMS]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

struct Recipe {
    id: String,
    title: String,
    category: usize,
    taste: [f64; TASTE_DIMS],
    quality: f64,
    popularity: f64,
    minutes: u32,
}

fn make_recipes(rng: &mut Rng, count: usize) -> Vec<Recipe> {
    let centres: Vec<[f64; TASTE_DIMS]> = CATEGORIES.iter().map(|_| gaussian(rng, 1.0)).collect();
    let mut used = std::collections::HashSet::new();
    (0..count)
        .map(|k| {
            let category = k % CATEGORIES.len();
            let c = &CATEGORIES[category];
            let slot = k / CATEGORIES.len();
            let mut title = format!(
                "{} {} {}",
                c.adjectives[slot % 5],
                c.ingredients[(slot / 5) % 10],
                c.dishes[(slot / 50 + slot) % 3]
            );
            if !used.insert(title.clone()) {
                title = format!("{title} No. {}", slot / 50 + 2);
                used.insert(title.clone());
            }
            let noise = gaussian(rng, 0.45);
            let taste = std::array::from_fn(|d| centres[category][d] + noise[d]);
            Recipe {
                id: format!("r{:03}", k + 1),
                title,
                category,
                taste,
                quality: 0.35 * rng.normal(),
                // Long-tailed popularity: a few favourites, many rarely tried.
                popularity: (1.1 * rng.normal()).exp(),
                minutes: 10 + 5 * rng.below(30) as u32,
            }
        })
        .collect()
}

/// How often each member cooked recipes: members cook the recipes they are drawn to (and
/// popular ones) more often, and a few favourites many times over. Counts come from their
/// own random stream, so the ratings stay as they were.
fn cooking_counts(recipes: &[Recipe], tastes: &[[f64; TASTE_DIMS]], seed: u64) -> (String, usize) {
    let mut rng = Rng::new(seed ^ 0x636f_6f6b);
    let mut out = String::from("user,item,count\n");
    let mut total = 0;
    for (m, taste) in tastes.iter().enumerate() {
        let tried = (12f64.ln() + 0.7 * rng.normal())
            .exp()
            .round()
            .clamp(2.0, 120.0) as usize;
        let mut keys: Vec<(f64, usize)> = recipes
            .iter()
            .enumerate()
            .map(|(j, r)| {
                let weight = r.popularity * (0.8 * dot(taste, &r.taste)).exp();
                (rng.uniform().max(1e-300).ln() / weight, j)
            })
            .collect();
        keys.sort_by(|a, b| b.0.total_cmp(&a.0));
        let mut cooked: Vec<(usize, u32)> = keys
            .iter()
            .take(tried.min(recipes.len()))
            .map(|&(_, j)| {
                let liking = 0.25 * dot(taste, &recipes[j].taste) + 0.5 * rng.normal();
                (j, liking.exp().round().clamp(1.0, 40.0) as u32)
            })
            .collect();
        cooked.sort_by(|a, b| recipes[a.0].id.cmp(&recipes[b.0].id));
        for (j, count) in cooked {
            let _ = writeln!(out, "m{:04},{},{count}", m + 1, recipes[j].id);
            total += 1;
        }
    }
    (out, total)
}

fn main() {
    let options = match parse_args() {
        Ok(o) => o,
        Err(e) => {
            eprintln!("error: {e}");
            std::process::exit(2);
        }
    };
    let mut rng = Rng::new(options.seed);
    let mut recipes = make_recipes(&mut rng, options.recipes);
    // Shuffle so recipe ids do not reveal categories in order.
    rng.shuffle(&mut recipes);
    for (k, r) in recipes.iter_mut().enumerate() {
        r.id = format!("r{:03}", k + 1);
    }
    let mut ratings = String::from("user,item,rating\n");
    let mut total = 0usize;
    let mut tastes = Vec::with_capacity(options.members);
    for m in 0..options.members {
        let taste = gaussian(&mut rng, 0.9);
        tastes.push(taste);
        let leniency = 0.4 * rng.normal();
        let activity = (18f64.ln() + 0.85 * rng.normal())
            .exp()
            .round()
            .clamp(2.0, 250.0) as usize;
        let wanted = activity.min(recipes.len());
        // Weighted sampling without replacement (Efraimidis & Spirakis): members mostly try
        // popular recipes and recipes they are drawn to.
        let mut keys: Vec<(f64, usize)> = recipes
            .iter()
            .enumerate()
            .map(|(j, r)| {
                let weight = r.popularity * (0.4 * dot(&taste, &r.taste)).exp();
                (rng.uniform().max(1e-300).ln() / weight, j)
            })
            .collect();
        keys.sort_by(|a, b| b.0.total_cmp(&a.0));
        for &(_, j) in keys.iter().take(wanted) {
            let r = &recipes[j];
            let score =
                2.75 + leniency + r.quality + 0.6 * dot(&taste, &r.taste) + 0.45 * rng.normal();
            let stars = score.round().clamp(1.0, 5.0) as u32;
            let _ = writeln!(ratings, "m{:04},{},{stars}", m + 1, r.id);
            total += 1;
        }
    }
    let mut items = String::from("item,title,category,minutes\n");
    let mut by_id: Vec<&Recipe> = recipes.iter().collect();
    by_id.sort_by(|a, b| a.id.cmp(&b.id));
    for r in by_id {
        let _ = writeln!(
            items,
            "{},{},{},{}",
            r.id, r.title, CATEGORIES[r.category].name, r.minutes
        );
    }
    let write = |name: &str, text: &str| {
        let path = options.out.join(name);
        if let Err(e) =
            std::fs::create_dir_all(&options.out).and_then(|()| std::fs::write(&path, text))
        {
            eprintln!("error: {}: {e}", path.display());
            std::process::exit(1);
        }
    };
    let (cooked, cooked_total) = cooking_counts(&recipes, &tastes, options.seed);
    write("ratings.csv", &ratings);
    write("items.csv", &items);
    write("cooked.csv", &cooked);
    eprintln!("wrote {cooked_total} cooking counts to cooked.csv");
    eprintln!(
        "wrote {total} ratings from {} members on {} recipes to {}",
        options.members,
        options.recipes,
        options.out.display()
    );
}
