//! The same invented situations written wide and long give identical design arrays.

use std::sync::Arc;

use sharecast::data::{self, Extra};
use sharecast::design::Design;

use crate::common::*;

#[test]
fn wide_and_long_layouts_give_identical_designs() {
    let dir = scratch("layouts");
    // Three situations, three alternatives; `c` is unavailable in situation 2.
    write(&dir, "w.csv", "id,person,mode,wt,ca,cb,cc,ta,tb,tc,inc,avc\n1,7,b,1.5,1.0,2.0,3.0,10,20,30,40,1\n2,7,a,0.5,1.1,2.1,3.1,11,21,31,40,0\n3,8,c,1.0,1.2,2.2,3.2,12,22,32,55,1\n");
    write(
        &dir,
        "l.csv",
        "id,person,alt,chosen,wt,cost,time,inc\n1,7,a,0,1.5,1.0,10,40\n1,7,b,1,1.5,2.0,20,40\n1,7,c,0,1.5,3.0,30,40\n2,7,a,1,0.5,1.1,11,40\n2,7,b,0,0.5,2.1,21,40\n3,8,c,1,1.0,3.2,32,55\n3,8,a,0,1.0,1.2,12,55\n3,8,b,0,1.0,2.2,22,55\n",
    );
    let common_tail = "[model]\nfamily = \"logit\"\nbase = \"a\"\n[alternatives.a]\n[alternatives.b]\n[alternatives.c]\n";
    let wide = format!(
        "[data]\nfile = \"w.csv\"\nlayout = \"wide\"\nchoice = \"mode\"\nweight = \"wt\"\ngroup = \"person\"\n{}available = \"avc\"\n[[attribute]]\nname = \"cost\"\ncolumns = {{ a = \"ca\", b = \"cb\", c = \"cc\" }}\n[[attribute]]\nname = \"time\"\ncoefficient = \"per-alternative\"\ncolumns = {{ a = \"ta\", b = \"tb\", c = \"tc\" }}\n[[characteristic]]\nname = \"income\"\ncolumn = \"inc\"\n",
        common_tail
    );
    let long = format!(
        "[data]\nfile = \"l.csv\"\nlayout = \"long\"\nsituation = \"id\"\nalternative = \"alt\"\nchosen = \"chosen\"\nweight = \"wt\"\ngroup = \"person\"\n{}[[attribute]]\nname = \"cost\"\ncolumn = \"cost\"\n[[attribute]]\nname = \"time\"\ncoefficient = \"per-alternative\"\ncolumn = \"time\"\n[[characteristic]]\nname = \"income\"\ncolumn = \"inc\"\n",
        common_tail
    );
    let ws = sharecast::model::parse_spec(&wide, &dir.join("w.toml")).unwrap();
    let ls = sharecast::model::parse_spec(&long, &dir.join("l.toml")).unwrap();
    let wd = data::load(&ws, &Extra::default()).unwrap();
    let ld = data::load(&ls, &Extra::default()).unwrap();
    let a = Design::build(&ws, Arc::new(wd.obs));
    let b = Design::build(&ls, Arc::new(ld.obs));
    assert_eq!(
        a.obs.available,
        vec![true, true, true, true, true, false, true, true, true]
    );
    assert_eq!(a.obs.chosen, vec![1, 0, 2]);
    assert_eq!(a, b);
    // Names follow the spec's naming rules.
    let names: Vec<&str> = ws.parameters.iter().map(|p| p.name.as_str()).collect();
    assert_eq!(
        names,
        ["asc_b", "asc_c", "cost", "time_a", "time_b", "time_c", "income_b", "income_c"]
    );
}
